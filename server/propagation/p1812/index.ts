// ITU-R P.1812-8 path method: public entry points.
export { P1812Predictor, predictP1812, type P1812Detail } from './predict.ts';
export { pathCentreLatitudeDeg } from './radio-climate.ts';
export * from './types.ts';
