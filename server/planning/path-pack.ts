// A path prediction packed into bytes for the Link cache (issue 20): the
// fleet table rebuilds every link budget from the stored path, so a Link row
// needs the path, not a JSON document of it. The packed form keeps every field
// exactly (IEEE 754 doubles, little-endian; NaN stays NaN where JSON would turn
// it into null) in 220–290 bytes where its JSON took 600–850 (and the row
// also kept a JSON summary of the budget, ~250 more, which nothing read).
//
// Layout (version 1):
//   u8  version (1)          u8 method (index in PATH_METHODS)
//   u8  flags (bit 0: line of sight)   u8 number of terms T
//   13 × f64: the scalar fields in SCALARS order
//   T × (u8 term id (index in TERM_KEYS), f64 value)
//   u16 byte length W, then W bytes of UTF-8 JSON of the warnings (W = 0: none)
// A path whose method or a term name is not in those lists is not packed
// (packPath returns null; the caller keeps it as JSON), so nothing is lost.
import { PATH_METHODS } from '../propagation/path-request.ts';
import type { PathPrediction } from './path.ts';

const VERSION = 1;

const SCALARS = [
  'distanceM',
  'basicLossDb',
  'freeSpaceLossDb',
  'excessLossDb',
  'fresnelClearanceRatio',
  'nodeGroundM',
  'gatewayGroundM',
  'nodeAntennaHeightAglM',
  'nodeClutterHeightM',
  'nodeAzimuthDeg',
  'gatewayAzimuthDeg',
  'nodeElevationDeg',
  'gatewayElevationDeg',
] as const satisfies ReadonlyArray<keyof PathPrediction>;

/** The propagation room's term names (server/propagation/path-prediction.ts PathTerms); append only. */
const TERM_KEYS = ['freeSpaceDb', 'diffractionMedianDb', 'diffractionDb', 'troposcatterDb', 'ductingDb', 'lineOfSightDb', 'combinedDb', 'locationCorrectionDb'] as const;
const TERM_ID = new Map<string, number>(TERM_KEYS.map((key, k) => [key, k]));
const METHOD_ID = new Map<string, number>(PATH_METHODS.map((method, k) => [method, k]));

const HEADER = 4;

/** The bytes of a path, or null when its method or a term is unknown to the layout (keep it as JSON then). */
export function packPath(path: PathPrediction): Uint8Array | null {
  const method = METHOD_ID.get(path.method);
  if (method === undefined) return null;
  const termKeys = Object.keys(path.terms);
  if (termKeys.length > 255 || termKeys.some((key) => !TERM_ID.has(key))) return null;
  const warnings = path.warnings.length > 0 ? new TextEncoder().encode(JSON.stringify(path.warnings)) : new Uint8Array(0);
  if (warnings.length > 0xffff) return null;
  const bytes = new Uint8Array(HEADER + SCALARS.length * 8 + termKeys.length * 9 + 2 + warnings.length);
  const view = new DataView(bytes.buffer);
  view.setUint8(0, VERSION);
  view.setUint8(1, method);
  view.setUint8(2, path.lineOfSight ? 1 : 0);
  view.setUint8(3, termKeys.length);
  let at = HEADER;
  for (const key of SCALARS) {
    view.setFloat64(at, path[key], true);
    at += 8;
  }
  for (const key of termKeys) {
    view.setUint8(at, TERM_ID.get(key)!);
    view.setFloat64(at + 1, path.terms[key], true);
    at += 9;
  }
  view.setUint16(at, warnings.length, true);
  bytes.set(warnings, at + 2);
  return bytes;
}

/** The path packPath packed (terms in their packed order); throws on bytes of another layout. */
export function unpackPath(bytes: Uint8Array): PathPrediction {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.byteLength < HEADER + SCALARS.length * 8 + 2 || view.getUint8(0) !== VERSION) throw new RangeError('packed path: unknown layout');
  const method = PATH_METHODS[view.getUint8(1)];
  if (method === undefined) throw new RangeError('packed path: unknown method');
  const termCount = view.getUint8(3);
  const scalars: Record<string, number> = {};
  let at = HEADER;
  for (const key of SCALARS) {
    scalars[key] = view.getFloat64(at, true);
    at += 8;
  }
  const terms: Record<string, number> = {};
  for (let k = 0; k < termCount; k++) {
    const key = TERM_KEYS[view.getUint8(at)];
    if (key === undefined) throw new RangeError('packed path: unknown term');
    terms[key] = view.getFloat64(at + 1, true);
    at += 9;
  }
  const length = view.getUint16(at, true);
  const warnings = length > 0 ? (JSON.parse(new TextDecoder().decode(bytes.subarray(at + 2, at + 2 + length))) as string[]) : [];
  const s = scalars as Record<(typeof SCALARS)[number], number>;
  return {
    method,
    distanceM: s.distanceM,
    basicLossDb: s.basicLossDb,
    freeSpaceLossDb: s.freeSpaceLossDb,
    excessLossDb: s.excessLossDb,
    lineOfSight: (view.getUint8(2) & 1) === 1,
    fresnelClearanceRatio: s.fresnelClearanceRatio,
    nodeGroundM: s.nodeGroundM,
    gatewayGroundM: s.gatewayGroundM,
    nodeAntennaHeightAglM: s.nodeAntennaHeightAglM,
    nodeClutterHeightM: s.nodeClutterHeightM,
    nodeAzimuthDeg: s.nodeAzimuthDeg,
    gatewayAzimuthDeg: s.gatewayAzimuthDeg,
    nodeElevationDeg: s.nodeElevationDeg,
    gatewayElevationDeg: s.gatewayElevationDeg,
    terms,
    warnings,
  };
}
