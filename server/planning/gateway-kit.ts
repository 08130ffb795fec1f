// The gateway kit a new gateway gets when nobody names one: the API's gateway
// form and the siting candidates share these (one figure, one place).

/** Catalog antenna for a new gateway (a 6 dBi fibreglass collinear, the usual rooftop choice). */
export const DEFAULT_GATEWAY_ANTENNA_ID = 'collinear-fibreglass-6dbi';
/** Catalog feedline for a new gateway. */
export const DEFAULT_GATEWAY_FEEDLINE_ID = 'low-loss-10mm';
/** Receiver noise figure of a gateway when not given, dB (the Gateway row's default). */
export const DEFAULT_GATEWAY_NOISE_FIGURE_DB = 6;
