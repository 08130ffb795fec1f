// A node's links to all its gateways from their predicted paths: where a
// directional node antenna points, the budgets, the summary; and the input
// hashes that key the link cache.
import { createHash, hash as oneShotHash } from 'node:crypto';
import { linkBudget, linkResult, summariseNodeLinks, type EndKit, type GatewayRadio, type LinkRadioSettings, type LinkResult, type NodeLinkSummary, type NodeRadio } from './link.ts';
import type { PathPrediction } from './path.ts';

/** Bumped whenever a formula here or in the rooms below changes results, so old cache rows miss. */
export const LINK_ENGINE_VERSION = 'links-3';

/** SHA-256 (hex) of a JSON-serialisable value, with object keys in sorted order. */
export function hashOf(value: unknown): string {
  return sha256Hex(stableJson(value));
}

/**
 * SHA-256 (hex) of a text: the one-shot crypto.hash where Node has it (20.12+), which makes no
 * Hash object per call (the fleet hashes a few inputs per link: 15,000 links allocated ~40 MB
 * of Hash objects and handles per report), else createHash. Same digest either way.
 */
const sha256Hex: (text: string) => string = typeof oneShotHash === 'function' ? (text) => oneShotHash('sha256', text, 'hex') : (text) => createHash('sha256').update(text).digest('hex');

/**
 * Hash of an object that does not change once built (catalog entries), memoised
 * by reference so a fleet run hashes each antenna pattern once, not per link.
 */
export function hashOfShared(value: object, memo: WeakMap<object, string>): string {
  let hash = memo.get(value);
  if (hash === undefined) {
    hash = hashOf(value);
    memo.set(value, hash);
  }
  return hash;
}

/**
 * JSON with object keys sorted, typed arrays as plain arrays: equal inputs give equal text.
 * Built by string concatenation over sorted keys (no entry arrays per object): the fleet
 * hashes a few inputs per link, so this runs tens of thousands of times per plan.
 */
export function stableJson(value: unknown): string {
  if (value === null || typeof value !== 'object') return JSON.stringify(value ?? null);
  if (ArrayBuffer.isView(value)) return JSON.stringify(Array.from(value as unknown as ArrayLike<number>));
  if (Array.isArray(value)) {
    let out = '[';
    for (let i = 0; i < value.length; i++) out += (i > 0 ? ',' : '') + stableJson(value[i]);
    return `${out}]`;
  }
  if (value instanceof Date) return JSON.stringify(value.toISOString());
  const record = value as Record<string, unknown>;
  const keys = sortedKeys(record);
  let out = '{';
  let first = true;
  for (const key of keys) {
    const v = record[key];
    if (v === undefined) continue;
    out += `${first ? '' : ','}${JSON.stringify(key)}:${stableJson(v)}`;
    first = false;
  }
  return `${out}}`;
}

/**
 * Object.keys in code-unit order, sorted in place by insertion (the inputs hashed have a handful
 * of keys; a long key list takes the library sort): Array.prototype.sort allocates a work array per call, which was a quarter of the
 * fleet's garbage. Keys are distinct, so the order equals sort((a, b) => a < b ? -1 : 1).
 */
function sortedKeys(record: Record<string, unknown>): string[] {
  const keys = Object.keys(record);
  if (keys.length > 32) return keys.sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  for (let i = 1; i < keys.length; i++) {
    const key = keys[i];
    let j = i - 1;
    while (j >= 0 && keys[j] > key) {
      keys[j + 1] = keys[j];
      j--;
    }
    keys[j + 1] = key;
  }
  return keys;
}

export interface GatewayLinkInput {
  gatewayId: string;
  path: PathPrediction;
  kit: EndKit;
  radio: GatewayRadio;
}

/**
 * Where a directional node antenna points: at the gateway with the least
 * basic loss (the installer aims at the best-heard site). null for an omni.
 */
export function nodeAimAzimuthDeg(nodeKit: EndKit, paths: readonly { path: PathPrediction }[]): number | null {
  const directional = nodeKit.antenna.pattern.kind === 'directional';
  if (!directional || paths.length === 0) return null;
  if (nodeKit.boresightAzimuthDeg !== null) return nodeKit.boresightAzimuthDeg;
  let best = paths[0].path;
  for (const { path } of paths) if (path.basicLossDb < best.basicLossDb) best = path;
  return best.nodeAzimuthDeg;
}

/** Link results of one node over the given gateway paths, with the aim fixed once for all of them. */
export function nodeLinkResults(nodeKit: EndKit, node: NodeRadio, gateways: readonly GatewayLinkInput[], settings: LinkRadioSettings): LinkResult[] {
  const aim = nodeAimAzimuthDeg(nodeKit, gateways);
  const kit: EndKit = aim === null ? nodeKit : { ...nodeKit, boresightAzimuthDeg: aim };
  return gateways.map((gateway) => linkResult(gateway.gatewayId, gateway.path, linkBudget(gateway.path, kit, gateway.kit, node, gateway.radio, settings)));
}

export { summariseNodeLinks, type NodeLinkSummary };
