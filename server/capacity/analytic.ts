// The analytic collision models: probability that an uplink survives the
// other traffic at one gateway.
//
// `aloha` — pure ALOHA (N. Abramson, "The ALOHA System — another alternative
// for computer communications", AFIPS 1970): Poisson arrivals, a frame is lost
// when any other frame of the same SF and bandwidth overlaps it on its channel;
// SFs are orthogonal; the load spreads evenly over the uplink channels. With
// frames of one length T and per-channel load G = λT the survival is exp(−2G).
// With mixed lengths the vulnerable window of frame i against j is T_i + T_j,
// so survival_i = exp(−Σ_j λ_j (T_i + T_j) / C), which is exp(−2G) again when
// all frames are equally long. A node never collides with itself (it cannot
// transmit twice at once), so its own traffic is left out of its sum.
//
// `capture` — the same Poisson overlap, but an overlapping frame j destroys i
// only when RSSI_i − RSSI_j is below the SIR threshold for (SF_i, SF_j)
// (./interference.ts): co-SF capture and inter-SF rejection, from each node's
// predicted RSSI at the gateway.
//
// Both also count the gateway's own acknowledgements: a half-duplex gateway is
// deaf on every channel while it transmits, so an uplink also needs no reply
// of that gateway to overlap it: survival ×= exp(−Σ_dl λ_dl (T_i + T_dl)).
import { classKey, type Traffic } from './traffic.ts';

export interface AnalyticOptions {
  /** Share of uplinks that ask for an acknowledgement (confirmed), 0–1. */
  confirmedShare: number;
  /** Gateway transmit duty cycle as a fraction (0 = none): caps the replies. */
  gatewayDutyCycle?: number;
  /** Flat SIR threshold table (./interference.ts sirThresholdTable); required for `capture`. */
  sirTable?: Float64Array;
}

/** Survival probability of each link's frames against collisions (and gateway deafness), one value per link. */
export function analyticSurvival(t: Traffic, model: 'aloha' | 'capture', options: AnalyticOptions): Float64Array {
  const survival = new Float64Array(t.linkNode.length);
  const deaf = downlinkTerms(t, options.confirmedShare, options.gatewayDutyCycle ?? 0);
  if (model === 'aloha') alohaSurvival(t, survival);
  else {
    if (!options.sirTable) throw new Error('capture model needs a SIR threshold table');
    captureSurvival(t, options.sirTable, survival);
  }
  for (let l = 0; l < survival.length; l++) {
    const g = t.linkGateway[l];
    const i = t.linkNode[l];
    if (deaf.lambda[g] > 0) survival[l] *= Math.exp(-(deaf.lambda[g] * t.toaS[i] + deaf.load[g]));
  }
  return survival;
}

/**
 * Rate (per s) and load (erlang) of each gateway's replies: node i's confirmed share, sent by
 * its reply gateway, scaled down where the demand exceeds the gateway's own duty cycle
 * (`gatewayDutyCycle` as a fraction, 0 = none): a gateway over its budget drops replies.
 * `demandLoad` keeps the unscaled airtime share.
 */
export function downlinkTerms(t: Traffic, confirmedShare: number, gatewayDutyCycle = 0): { lambda: Float64Array; load: Float64Array; demandLambda: Float64Array; demandLoad: Float64Array } {
  const demandLambda = new Float64Array(t.gatewayCount);
  const demandLoad = new Float64Array(t.gatewayCount);
  if (confirmedShare > 0) {
    for (let i = 0; i < t.nodeCount; i++) {
      const g = t.replyGateway[i];
      if (g < 0) continue;
      const rate = t.ratePerS[i] * confirmedShare;
      demandLambda[g] += rate;
      demandLoad[g] += rate * t.ackToaS[i];
    }
  }
  const lambda = demandLambda.slice();
  const load = demandLoad.slice();
  if (gatewayDutyCycle > 0) {
    for (let g = 0; g < t.gatewayCount; g++) {
      if (load[g] <= gatewayDutyCycle) continue;
      const scale = gatewayDutyCycle / load[g];
      lambda[g] *= scale;
      load[g] *= scale;
    }
  }
  return { lambda, load, demandLambda, demandLoad };
}

/** Number of (bandwidth class, SF) keys the per-gateway tables need. */
export function keyCount(t: Traffic): number {
  return Math.max(1, t.bandwidthsKhz.length) * 13;
}

/** Per gateway and class: arrival rate and load of heard frames, per channel. */
export function heardLoad(t: Traffic): { lambda: Float64Array; load: Float64Array; keys: number } {
  const keys = keyCount(t);
  const lambda = new Float64Array(t.gatewayCount * keys);
  const load = new Float64Array(t.gatewayCount * keys);
  const c = t.channels;
  for (let l = 0; l < t.linkNode.length; l++) {
    if (!t.linkHeard[l]) continue;
    const i = t.linkNode[l];
    const k = t.linkGateway[l] * keys + classKey(t.bwClass[i], t.sf[i]);
    lambda[k] += t.ratePerS[i] / c;
    load[k] += (t.ratePerS[i] * t.toaS[i]) / c;
  }
  return { lambda, load, keys };
}

function alohaSurvival(t: Traffic, out: Float64Array): void {
  const { lambda, load, keys } = heardLoad(t);
  const c = t.channels;
  for (let l = 0; l < out.length; l++) {
    const i = t.linkNode[l];
    const k = t.linkGateway[l] * keys + classKey(t.bwClass[i], t.sf[i]);
    let lam = lambda[k];
    let g = load[k];
    if (t.linkHeard[l]) {
      // Leave the node's own frames out: a radio does not overlap itself.
      lam -= t.ratePerS[i] / c;
      g -= (t.ratePerS[i] * t.toaS[i]) / c;
    }
    out[l] = Math.exp(-(Math.max(0, lam) * t.toaS[i] + Math.max(0, g)));
  }
}

/**
 * Capture: per gateway and interfering class, the links sorted by RSSI with
 * suffix sums of λ and λT, so each victim finds the interferers strong enough
 * to hurt it (RSSI_j > RSSI_i − threshold) by one binary search per class.
 */
function captureSurvival(t: Traffic, sirTable: Float64Array, out: Float64Array): void {
  const keys = keyCount(t);
  const linkCount = t.linkNode.length;
  const keyOf = new Uint32Array(linkCount);
  const order = new Uint32Array(linkCount);
  for (let l = 0; l < linkCount; l++) {
    order[l] = l;
    keyOf[l] = t.linkGateway[l] * keys + classKey(t.bwClass[t.linkNode[l]], t.sf[t.linkNode[l]]);
  }
  order.sort((a, b) => keyOf[a] - keyOf[b] || t.linkRssiDbm[a] - t.linkRssiDbm[b]);
  const segStart = new Int32Array(t.gatewayCount * keys + 1).fill(-1);
  const rssi = new Float64Array(linkCount);
  const sufLambda = new Float64Array(linkCount + 1);
  const sufLoad = new Float64Array(linkCount + 1);
  for (let p = 0; p < linkCount; p++) {
    const l = order[p];
    rssi[p] = t.linkRssiDbm[l];
    const k = keyOf[l];
    if (segStart[k] < 0) segStart[k] = p;
  }
  // Segment ends: the next used segment's start, or the end.
  const segEnd = new Int32Array(t.gatewayCount * keys);
  let next = linkCount;
  for (let k = t.gatewayCount * keys - 1; k >= 0; k--) {
    segEnd[k] = next;
    if (segStart[k] >= 0) next = segStart[k];
  }
  // Suffix sums within each segment (reset at segment starts, walking backwards).
  for (let p = linkCount - 1; p >= 0; p--) {
    const l = order[p];
    const i = t.linkNode[l];
    const k = keyOf[l];
    const atEnd = p + 1 >= segEnd[k];
    sufLambda[p] = t.ratePerS[i] + (atEnd ? 0 : sufLambda[p + 1]);
    sufLoad[p] = t.ratePerS[i] * t.toaS[i] + (atEnd ? 0 : sufLoad[p + 1]);
  }
  const c = t.channels;
  for (let l = 0; l < linkCount; l++) {
    const i = t.linkNode[l];
    const g = t.linkGateway[l];
    const sfI = t.sf[i];
    const cls = t.bwClass[i];
    const r = t.linkRssiDbm[l];
    const ti = t.toaS[i];
    let hazard = 0;
    for (let sfJ = 5; sfJ <= 12; sfJ++) {
      const k = g * keys + classKey(cls, sfJ);
      const start = segStart[k];
      if (start < 0) continue;
      const end = segEnd[k];
      const threshold = sirTable[sfI * 13 + sfJ];
      // First position with RSSI_j > r − threshold (upper bound).
      const cut = r - threshold;
      let lo = start;
      let hi = end;
      while (lo < hi) {
        const mid = (lo + hi) >>> 1;
        if (rssi[mid] > cut) hi = mid;
        else lo = mid + 1;
      }
      if (lo >= end) continue;
      let lam = sufLambda[lo];
      let load = sufLoad[lo];
      if (sfJ === sfI && threshold > 0) {
        // The node itself sits in this range (its RSSI exceeds r − threshold): leave it out.
        lam -= t.ratePerS[i];
        load -= t.ratePerS[i] * ti;
      }
      hazard += (Math.max(0, lam) * ti + Math.max(0, load)) / c;
    }
    out[l] = Math.exp(-hazard);
  }
}
