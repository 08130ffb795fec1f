// Plain capacity caps for planners and optimisers (siting can add them as
// linear constraints: Σ_i load_i · x_ij ≤ cap_j).
// Pure ALOHA (Abramson 1970): survival exp(−2G) ≥ s  ⇔  G ≤ −ln(s) / 2 per channel.

/** Per-channel offered load (erlang) at which pure-ALOHA survival falls to `targetSuccess` (0 < s < 1): G = −ln(s)/2. */
export function alohaLoadCapErlang(targetSuccess: number): number {
  if (!(targetSuccess > 0 && targetSuccess < 1)) throw new RangeError(`targetSuccess must lie strictly between 0 and 1 (got ${targetSuccess})`);
  return -Math.log(targetSuccess) / 2;
}

/** One node's offered load, erlang: λ·T with λ in frames per second and T in seconds. */
export function nodeLoadErlang(messagesPerHour: number, timeOnAirMs: number): number {
  if (!(messagesPerHour >= 0) || !(timeOnAirMs > 0)) throw new RangeError('messagesPerHour must be ≥ 0 and timeOnAirMs > 0');
  return (messagesPerHour / 3600) * (timeOnAirMs / 1000);
}

/** Most nodes of one SF and frame a gateway carries on `channels` channels at a target pure-ALOHA survival: ⌊G_cap·C / (λT)⌋. */
export function alohaNodeCap(targetSuccess: number, channels: number, messagesPerHour: number, timeOnAirMs: number): number {
  const load = nodeLoadErlang(messagesPerHour, timeOnAirMs);
  if (load === 0) return Number.POSITIVE_INFINITY;
  return Math.floor((alohaLoadCapErlang(targetSuccess) * channels) / load + 1e-9);
}
