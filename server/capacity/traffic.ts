// The traffic of a fleet in the typed-array layout the models read: one row
// per node (SF, bandwidth class, time on air, rate) and, in compressed rows
// (CSR), one entry per node → gateway link (gateway, predicted RSSI, link
// delivery probability, heard or not).

export interface CapacityLinkInput {
  /** Index of the gateway, 0 … gatewayCount − 1. */
  gateway: number;
  /** Predicted median RSSI of the node at this gateway, dBm. */
  rssiDbm: number;
  /** Link delivery probability (collisions aside), 0–1. */
  linkProbability: number;
  /** Whether the gateway hears the node at its SF (median margin ≥ 0); default linkProbability ≥ 0.5. */
  heard?: boolean;
}

export interface CapacityNodeInput {
  /** The SF the node transmits at (one for all its gateways: the network picks it for the best one). */
  sf: number;
  bandwidthKhz: number;
  /** Time on air of one uplink frame, ms. */
  timeOnAirMs: number;
  messagesPerHour: number;
  links: readonly CapacityLinkInput[];
}

export interface Traffic {
  nodeCount: number;
  gatewayCount: number;
  /** Uplink channels the load spreads evenly over. */
  channels: number;
  sf: Uint8Array;
  /** Index into `bandwidthsKhz`: frames of different bandwidths are treated as orthogonal. */
  bwClass: Uint8Array;
  bandwidthsKhz: number[];
  toaS: Float64Array;
  ratePerS: Float64Array;
  /** Acknowledgement time on air, s (RX1: same SF and bandwidth). */
  ackToaS: Float64Array;
  /** Gateway a reply comes from (highest link probability among the heard ones), −1 = none. */
  replyGateway: Int32Array;
  /** Links of node i: linkStart[i] … linkStart[i + 1] − 1. */
  linkStart: Uint32Array;
  linkNode: Uint32Array;
  linkGateway: Uint32Array;
  linkRssiDbm: Float64Array;
  linkProbability: Float64Array;
  linkHeard: Uint8Array;
}

export class CapacityInputError extends Error {}

/**
 * Builds the typed layout, checking every figure (the message names the field).
 * `ackTimeOnAirMs(sf, bandwidthKhz)` gives the reply's time on air.
 */
export function buildTraffic(nodes: readonly CapacityNodeInput[], gatewayCount: number, channels: number, ackTimeOnAirMs: (sf: number, bandwidthKhz: number) => number): Traffic {
  if (!Number.isInteger(gatewayCount) || gatewayCount < 0) throw new CapacityInputError(`gatewayCount: must be a whole number ≥ 0 (got ${gatewayCount})`);
  if (!Number.isInteger(channels) || channels < 1 || channels > 255) throw new CapacityInputError(`channels: must be a whole number from 1 to 255 (got ${channels})`);
  const n = nodes.length;
  let linkCount = 0;
  for (const node of nodes) linkCount += node.links.length;
  const t: Traffic = {
    nodeCount: n,
    gatewayCount,
    channels,
    sf: new Uint8Array(n),
    bwClass: new Uint8Array(n),
    bandwidthsKhz: [],
    toaS: new Float64Array(n),
    ratePerS: new Float64Array(n),
    ackToaS: new Float64Array(n),
    replyGateway: new Int32Array(n).fill(-1),
    linkStart: new Uint32Array(n + 1),
    linkNode: new Uint32Array(linkCount),
    linkGateway: new Uint32Array(linkCount),
    linkRssiDbm: new Float64Array(linkCount),
    linkProbability: new Float64Array(linkCount),
    linkHeard: new Uint8Array(linkCount),
  };
  const ackCache = new Map<string, number>();
  let l = 0;
  for (let i = 0; i < n; i++) {
    const node = nodes[i];
    const field = `nodes[${i}]`;
    if (!Number.isInteger(node.sf) || node.sf < 5 || node.sf > 12) throw new CapacityInputError(`${field}.sf: must be a whole number from 5 to 12 (got ${node.sf})`);
    if (!(node.bandwidthKhz > 0)) throw new CapacityInputError(`${field}.bandwidthKhz: must be positive (got ${node.bandwidthKhz})`);
    if (!(node.timeOnAirMs > 0) || !Number.isFinite(node.timeOnAirMs)) throw new CapacityInputError(`${field}.timeOnAirMs: must be a positive number of ms (got ${node.timeOnAirMs})`);
    if (!(node.messagesPerHour >= 0) || !Number.isFinite(node.messagesPerHour)) throw new CapacityInputError(`${field}.messagesPerHour: must be ≥ 0 (got ${node.messagesPerHour})`);
    let cls = t.bandwidthsKhz.findIndex((bw) => Math.abs(bw - node.bandwidthKhz) < 0.01);
    if (cls < 0) {
      cls = t.bandwidthsKhz.length;
      if (cls > 255) throw new CapacityInputError(`${field}.bandwidthKhz: more than 256 different bandwidths`);
      t.bandwidthsKhz.push(node.bandwidthKhz);
    }
    t.sf[i] = node.sf;
    t.bwClass[i] = cls;
    t.toaS[i] = node.timeOnAirMs / 1000;
    t.ratePerS[i] = node.messagesPerHour / 3600;
    const key = `${node.sf}/${node.bandwidthKhz}`;
    let ack = ackCache.get(key);
    if (ack === undefined) {
      ack = ackTimeOnAirMs(node.sf, node.bandwidthKhz) / 1000;
      ackCache.set(key, ack);
    }
    t.ackToaS[i] = ack;
    t.linkStart[i] = l;
    let bestP = -1;
    for (let k = 0; k < node.links.length; k++, l++) {
      const link = node.links[k];
      if (!Number.isInteger(link.gateway) || link.gateway < 0 || link.gateway >= gatewayCount) throw new CapacityInputError(`${field}.links[${k}].gateway: must be a gateway index from 0 to ${gatewayCount - 1} (got ${link.gateway})`);
      if (!Number.isFinite(link.rssiDbm)) throw new CapacityInputError(`${field}.links[${k}].rssiDbm: must be a finite number of dBm`);
      if (!(link.linkProbability >= 0 && link.linkProbability <= 1)) throw new CapacityInputError(`${field}.links[${k}].linkProbability: must be within 0–1 (got ${link.linkProbability})`);
      const heard = link.heard ?? link.linkProbability >= 0.5;
      t.linkNode[l] = i;
      t.linkGateway[l] = link.gateway;
      t.linkRssiDbm[l] = link.rssiDbm;
      t.linkProbability[l] = link.linkProbability;
      t.linkHeard[l] = heard ? 1 : 0;
      if (heard && link.linkProbability > bestP) {
        bestP = link.linkProbability;
        t.replyGateway[i] = link.gateway;
      }
    }
  }
  t.linkStart[n] = l;
  return t;
}

/** Key of a (bandwidth class, SF) pair in the per-gateway tables: class·13 + SF. */
export function classKey(bwClass: number, sf: number): number {
  return bwClass * 13 + sf;
}
