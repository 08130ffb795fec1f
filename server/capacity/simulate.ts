// A seeded discrete-event simulation of the same traffic the analytic models
// describe, to cross-check them and to cover what they cannot:
//  - Poisson arrivals per node; each frame on a channel drawn uniformly (as
//    LoRaWAN devices pick a channel per frame);
//  - a node never overlaps itself, and with duty-cycle back-off it stays
//    silent T·(1/DC − 1) after a frame of length T (the time-off rule LoRaWAN
//    devices apply per sub-band); a message arriving meanwhile waits, and a
//    newer one replaces it (a sensor sends its latest reading);
//  - acknowledgements: a confirmed uplink gets an empty reply in RX1 (1 s after
//    the uplink ends, same SF) from the node's reply gateway, if that gateway is
//    free and within its own duty cycle; a half-duplex gateway hears nothing on
//    any channel while it transmits;
//  - reception at every gateway that has a link to the node, with the same
//    collision rule as the analytic model (`aloha`: same SF and bandwidth on
//    the same channel destroys both; `capture`: SIR thresholds of ./interference.ts).
// The reply is scheduled whether or not its gateway decoded the uplink: a
// slight overestimate of the downlink load (documented simplification).
//
// Hot loops run on typed arrays; per-event work allocates nothing (buffers
// grow by doubling, so a run allocates O(log n) times).
import { SeededRandom } from './random.ts';
import { RX1_DELAY_S } from './airtime.ts';
import { keyCount } from './analytic.ts';
import { classKey, type Traffic } from './traffic.ts';

export interface SimulationOptions {
  durationS: number;
  seed: number;
  rule: 'aloha' | 'capture';
  /** Flat SIR threshold table (required for `capture`). */
  sirTable?: Float64Array;
  /** Node duty cycle as a fraction (0.01 = 1 %); 0 = no duty-cycle rule. */
  dutyCycle: number;
  /** Apply the time-off after each frame (default true when dutyCycle > 0). */
  dutyCycleBackoff?: boolean;
  /** Gateway transmit duty cycle as a fraction; 0 = none. */
  gatewayDutyCycle: number;
  confirmedShare: number;
}

export interface SimulationResult {
  /** Frames of each link that reached the gateway (sent while the link existed) and those that survived. */
  linkSent: Uint32Array;
  linkSurvived: Uint32Array;
  /** Messages each node wanted to send within the duration, and frames it did send. */
  nodeOffered: Uint32Array;
  nodeSent: Uint32Array;
  /** Frames delayed by the duty-cycle back-off. */
  nodeDelayed: Uint32Array;
  /** Heard uplink airtime per gateway and channel (index g·channels + c), s. */
  channelAirtimeS: Float64Array;
  /** Heard frames per gateway and class key (index g·keys + key), sent and survived. */
  keySent: Uint32Array;
  keySurvived: Uint32Array;
  keys: number;
  gatewayDownlinks: Uint32Array;
  gatewayDownlinkAirtimeS: Float64Array;
  /** Replies a gateway could not send (busy or over its duty cycle). */
  gatewayRepliesDropped: Uint32Array;
  transmissions: number;
}

function grow<T extends Float64Array | Uint32Array | Uint8Array | Int32Array>(array: T, size: number): T {
  const bigger = new (array.constructor as new (n: number) => T)(size);
  bigger.set(array);
  return bigger;
}

export function simulate(t: Traffic, options: SimulationOptions): SimulationResult {
  const duration = options.durationS;
  if (!(duration > 0) || !Number.isFinite(duration)) throw new RangeError('durationS must be a positive number of seconds');
  if (options.rule === 'capture' && !options.sirTable) throw new Error('capture rule needs a SIR threshold table');
  const rng = new SeededRandom(options.seed);
  const n = t.nodeCount;
  const channels = t.channels;
  const backoff = options.dutyCycle > 0 && options.dutyCycleBackoff !== false;
  const offFactor = backoff ? 1 / options.dutyCycle - 1 : 0;

  // ---- 1. Uplinks in start order: a min-heap of nodes keyed by their next frame start.
  const nodeOffered = new Uint32Array(n);
  const nodeSent = new Uint32Array(n);
  const nodeDelayed = new Uint32Array(n);
  const key = new Float64Array(n);
  const nextArrival = new Float64Array(n);
  const heap = new Int32Array(n);
  let heapSize = 0;
  let expected = 0;
  for (let i = 0; i < n; i++) {
    const rate = t.ratePerS[i];
    if (!(rate > 0) || t.linkStart[i + 1] === t.linkStart[i]) continue; // silent, or heard by no gateway
    expected += rate * duration;
    const first = rng.exponential(rate);
    if (first >= duration) continue;
    nodeOffered[i]++;
    key[i] = first;
    nextArrival[i] = first + rng.exponential(rate);
    heap[heapSize++] = i;
  }
  for (let p = (heapSize >> 1) - 1; p >= 0; p--) siftDown(heap, heapSize, key, p);

  let capacity = Math.ceil(expected * 1.2) + 64;
  let txStart = new Float64Array(capacity);
  let txNode = new Uint32Array(capacity);
  let txChannel = new Uint8Array(capacity);
  let txConfirmed = new Uint8Array(capacity);
  let m = 0;
  while (heapSize > 0) {
    const i = heap[0];
    const start = key[i];
    if (m === capacity) {
      capacity *= 2;
      txStart = grow(txStart, capacity);
      txNode = grow(txNode, capacity);
      txChannel = grow(txChannel, capacity);
      txConfirmed = grow(txConfirmed, capacity);
    }
    txStart[m] = start;
    txNode[m] = i;
    txChannel[m] = channels > 1 ? rng.below(channels) : 0;
    txConfirmed[m] = options.confirmedShare > 0 && rng.next() < options.confirmedShare ? 1 : 0;
    m++;
    nodeSent[i]++;
    const toa = t.toaS[i];
    const readyAt = start + toa * (1 + offFactor);
    const rate = t.ratePerS[i];
    let waiting = 0;
    let a = nextArrival[i];
    while (a < readyAt) {
      if (a < duration) nodeOffered[i]++;
      waiting++;
      a += rng.exponential(rate);
    }
    let nextKey: number;
    if (waiting > 0) {
      // The newest waiting message goes out when the radio may send again; older ones are replaced.
      nextKey = readyAt;
      nextArrival[i] = a;
      nodeDelayed[i]++;
    } else {
      nextKey = a;
      if (a < duration) nodeOffered[i]++;
      nextArrival[i] = a + rng.exponential(rate);
    }
    if (nextKey < duration) {
      key[i] = nextKey;
      siftDown(heap, heapSize, key, 0);
    } else {
      heap[0] = heap[--heapSize];
      if (heapSize > 0) siftDown(heap, heapSize, key, 0);
    }
  }

  // ---- 2. Replies: candidates in uplink order, accepted per gateway in start order.
  const gatewayDownlinks = new Uint32Array(t.gatewayCount);
  const gatewayDownlinkAirtimeS = new Float64Array(t.gatewayCount);
  const gatewayRepliesDropped = new Uint32Array(t.gatewayCount);
  let dlCount = 0;
  for (let k = 0; k < m; k++) if (txConfirmed[k] && t.replyGateway[txNode[k]] >= 0) dlCount++;
  const dlOrder = new Uint32Array(dlCount);
  const dlStartAll = new Float64Array(dlCount);
  const dlDurAll = new Float64Array(dlCount);
  const dlGwAll = new Uint32Array(dlCount);
  let d = 0;
  for (let k = 0; k < m; k++) {
    const i = txNode[k];
    if (!txConfirmed[k] || t.replyGateway[i] < 0) continue;
    dlOrder[d] = d;
    dlStartAll[d] = txStart[k] + t.toaS[i] + RX1_DELAY_S;
    dlDurAll[d] = t.ackToaS[i];
    dlGwAll[d] = t.replyGateway[i];
    d++;
  }
  dlOrder.sort((x, y) => dlStartAll[x] - dlStartAll[y]);
  const gwReady = new Float64Array(t.gatewayCount);
  const gwOff = options.gatewayDutyCycle > 0 ? 1 / options.gatewayDutyCycle - 1 : 0;
  const accepted = new Uint8Array(dlCount);
  for (let q = 0; q < dlCount; q++) {
    const x = dlOrder[q];
    const g = dlGwAll[x];
    const s = dlStartAll[x];
    if (s < gwReady[g] || s >= duration) {
      if (s < duration) gatewayRepliesDropped[g]++;
      continue;
    }
    accepted[q] = 1;
    gwReady[g] = s + dlDurAll[x] * (1 + gwOff);
    gatewayDownlinks[g]++;
    gatewayDownlinkAirtimeS[g] += dlDurAll[x];
  }
  // CSR of accepted replies by gateway, in start order (non-overlapping within a gateway).
  const dlFirst = new Uint32Array(t.gatewayCount + 1);
  for (let g = 0; g < t.gatewayCount; g++) dlFirst[g + 1] = dlFirst[g] + gatewayDownlinks[g];
  const dlStart = new Float64Array(dlFirst[t.gatewayCount]);
  const dlEnd = new Float64Array(dlFirst[t.gatewayCount]);
  const fill = dlFirst.slice(0, t.gatewayCount);
  for (let q = 0; q < dlCount; q++) {
    if (!accepted[q]) continue;
    const x = dlOrder[q];
    const g = dlGwAll[x];
    const at = fill[g]++;
    dlStart[at] = dlStartAll[x];
    dlEnd[at] = dlStartAll[x] + dlDurAll[x];
  }
  const dlPointer = dlFirst.slice(0, t.gatewayCount);

  // ---- 3. Receptions: per gateway and channel, a pooled list of frames still on the air.
  const keys = keyCount(t);
  const linkCount = t.linkNode.length;
  const linkSent = new Uint32Array(linkCount);
  const linkSurvived = new Uint32Array(linkCount);
  const channelAirtimeS = new Float64Array(t.gatewayCount * channels);
  const keySent = new Uint32Array(t.gatewayCount * keys);
  const keySurvived = new Uint32Array(t.gatewayCount * keys);
  const head = new Int32Array(t.gatewayCount * channels).fill(-1);
  let pool = 1024;
  let entLink = new Uint32Array(pool);
  let entEnd = new Float64Array(pool);
  let entLost = new Uint8Array(pool);
  let entNext = new Int32Array(pool);
  let free = -1;
  let used = 0;
  const aloha = options.rule === 'aloha';
  const sir = options.sirTable ?? new Float64Array(0);

  const retire = (q: number, g: number, c: number) => {
    const l = entLink[q];
    linkSent[l]++;
    const ok = entLost[q] === 0;
    if (ok) linkSurvived[l]++;
    if (t.linkHeard[l]) {
      const i = t.linkNode[l];
      const kk = g * keys + classKey(t.bwClass[i], t.sf[i]);
      keySent[kk]++;
      if (ok) keySurvived[kk]++;
      channelAirtimeS[g * channels + c] += t.toaS[i];
    }
    entNext[q] = free;
    free = q;
  };

  for (let k = 0; k < m; k++) {
    const i = txNode[k];
    const s = txStart[k];
    const e = s + t.toaS[i];
    const c = txChannel[k];
    const sfI = t.sf[i];
    const clsI = t.bwClass[i];
    for (let l = t.linkStart[i]; l < t.linkStart[i + 1]; l++) {
      const g = t.linkGateway[l];
      const heardI = t.linkHeard[l] === 1;
      const rssiI = t.linkRssiDbm[l];
      // Deaf while this gateway sends a reply that overlaps [s, e).
      let p = dlPointer[g];
      const last = dlFirst[g + 1];
      while (p < last && dlEnd[p] <= s) p++;
      dlPointer[g] = p;
      let lost = p < last && dlStart[p] < e ? 1 : 0;
      const h = g * channels + c;
      let prev = -1;
      let q = head[h];
      while (q >= 0) {
        const nextQ = entNext[q];
        if (entEnd[q] <= s) {
          if (prev < 0) head[h] = nextQ;
          else entNext[prev] = nextQ;
          retire(q, g, c);
          q = nextQ;
          continue;
        }
        const lj = entLink[q];
        const j = t.linkNode[lj];
        if (t.bwClass[j] === clsI) {
          const sfJ = t.sf[j];
          if (aloha) {
            if (sfJ === sfI) {
              // Only frames the gateway hears take part in the ALOHA count.
              if (t.linkHeard[lj]) lost = 1;
              if (heardI) entLost[q] = 1;
            }
          } else {
            const rssiJ = t.linkRssiDbm[lj];
            if (rssiI - rssiJ < sir[sfI * 13 + sfJ]) lost = 1;
            if (rssiJ - rssiI < sir[sfJ * 13 + sfI]) entLost[q] = 1;
          }
        }
        prev = q;
        q = nextQ;
      }
      // New entry from the free list (or the pool's end, growing it when full).
      let slot: number;
      if (free >= 0) {
        slot = free;
        free = entNext[free];
      } else {
        if (used === pool) {
          pool *= 2;
          entLink = grow(entLink, pool);
          entEnd = grow(entEnd, pool);
          entLost = grow(entLost, pool);
          entNext = grow(entNext, pool);
        }
        slot = used++;
      }
      entLink[slot] = l;
      entEnd[slot] = e;
      entLost[slot] = lost;
      entNext[slot] = head[h];
      head[h] = slot;
    }
  }
  for (let h = 0; h < head.length; h++) {
    let q = head[h];
    const g = Math.floor(h / channels);
    const c = h - g * channels;
    while (q >= 0) {
      const nextQ = entNext[q];
      retire(q, g, c);
      q = nextQ;
    }
    head[h] = -1;
  }
  return {
    linkSent,
    linkSurvived,
    nodeOffered,
    nodeSent,
    nodeDelayed,
    channelAirtimeS,
    keySent,
    keySurvived,
    keys,
    gatewayDownlinks,
    gatewayDownlinkAirtimeS,
    gatewayRepliesDropped,
    transmissions: m,
  };
}

function siftDown(heap: Int32Array, size: number, key: Float64Array, from: number): void {
  let p = from;
  const item = heap[p];
  const itemKey = key[item];
  for (;;) {
    let child = 2 * p + 1;
    if (child >= size) break;
    if (child + 1 < size && key[heap[child + 1]] < key[heap[child]]) child++;
    if (key[heap[child]] >= itemKey) break;
    heap[p] = heap[child];
    p = child;
  }
  heap[p] = item;
}
