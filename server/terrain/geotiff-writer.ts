// Our own baseline GeoTIFF writer: one band, little-endian classic TIFF
// (TIFF 6.0 baseline + the GeoTIFF 1.1 tags ModelPixelScale, ModelTiepoint,
// GeoKeyDirectory, and GDAL's GDAL_NODATA ASCII tag), stripped or tiled,
// uncompressed or deflate (TIFF compression 8, zlib stream, node:zlib),
// optionally with reduced-resolution overviews (NewSubfileType = 1), laid
// out with every IFD first and the image data after (the order cloud-
// optimised readers like). Used by the demo terrain script, the coverage
// GeoTIFF export, tests and benchmarks.
import { openSync, writeSync, closeSync } from 'node:fs';
import { crsKindForEpsg } from './crs.ts';

export type RasterArray = Float32Array | Float64Array | Int8Array | Uint8Array | Int16Array | Uint16Array | Int32Array | Uint32Array;

export type SampleType = 'uint8' | 'int8' | 'uint16' | 'int16' | 'uint32' | 'int32' | 'float32' | 'float64';

/** GDAL order: [originX, pixelSizeX, 0, originY, 0, -pixelSizeY]; origin is the outer corner of pixel (0,0). */
export type GeoTransform = [number, number, number, number, number, number];

export interface GeoTiffOptions {
  widthPx: number;
  heightPx: number;
  /** Row-major samples, widthPx × heightPx. */
  data: RasterArray;
  geoTransform: GeoTransform;
  /** EPSG code of a geographic (e.g. 4326) or projected (e.g. 32633) CRS. */
  epsg: number;
  noData?: number;
  /** Tiled layout (tile size a multiple of 16, TIFF 6.0 §15); stripped when absent. */
  tiled?: { tileSizePx: number };
  compression?: 'none' | 'deflate';
  /** Rows per strip for stripped files (default: about 8 KiB of samples per strip). */
  rowsPerStrip?: number;
  /** Decimation factors of overviews to add, e.g. [2, 4, 8] (nearest sample at the block centre). */
  overviews?: number[];
  /** GeoTIFF raster type: 'area' (default, RasterPixelIsArea) or 'point' (RasterPixelIsPoint). */
  rasterType?: 'area' | 'point';
  /** Treat the EPSG code as geographic or projected (default: from our CRS table). */
  crsKind?: 'geographic' | 'projected';
  /** value = raw · scale + offset, stored as GDAL's GDAL_METADATA items (role scale/offset) of band 0. */
  scale?: number;
  offset?: number;
}

/** Streaming form: samples come block by block from a function, so a huge raster never sits in memory. */
export interface GeoTiffFileOptions extends Omit<GeoTiffOptions, 'data' | 'overviews'> {
  sampleType: SampleType;
  /**
   * Returns the samples of the window (x0, y0, w, h) of the given level
   * (0 = full resolution, k = overview k of `overviewFactors`), row-major, of the sample type.
   */
  readBlock: (level: number, x0: number, y0: number, w: number, h: number) => RasterArray;
  overviewFactors?: number[];
}

const TAG = {
  NewSubfileType: 254,
  ImageWidth: 256,
  ImageLength: 257,
  BitsPerSample: 258,
  Compression: 259,
  Photometric: 262,
  StripOffsets: 273,
  SamplesPerPixel: 277,
  RowsPerStrip: 278,
  StripByteCounts: 279,
  PlanarConfiguration: 284,
  TileWidth: 322,
  TileLength: 323,
  TileOffsets: 324,
  TileByteCounts: 325,
  SampleFormat: 339,
  ModelPixelScale: 33550,
  ModelTiepoint: 33922,
  GeoKeyDirectory: 34735,
  GDAL_METADATA: 42112,
  GDAL_NODATA: 42113,
} as const;

// TIFF field types (TIFF 6.0 §2).
const ASCII = 2;
const SHORT = 3;
const LONG = 4;
const DOUBLE = 12;
const typeSize: Record<number, number> = { [ASCII]: 1, [SHORT]: 2, [LONG]: 4, [DOUBLE]: 8 };

interface Field {
  tag: number;
  type: number;
  values: number[] | string;
}

const sampleInfo: Record<SampleType, { bits: number; format: number; bytes: number; make: (n: number) => RasterArray }> = {
  uint8: { bits: 8, format: 1, bytes: 1, make: (n) => new Uint8Array(n) },
  int8: { bits: 8, format: 2, bytes: 1, make: (n) => new Int8Array(n) },
  uint16: { bits: 16, format: 1, bytes: 2, make: (n) => new Uint16Array(n) },
  int16: { bits: 16, format: 2, bytes: 2, make: (n) => new Int16Array(n) },
  uint32: { bits: 32, format: 1, bytes: 4, make: (n) => new Uint32Array(n) },
  int32: { bits: 32, format: 2, bytes: 4, make: (n) => new Int32Array(n) },
  float32: { bits: 32, format: 3, bytes: 4, make: (n) => new Float32Array(n) },
  float64: { bits: 64, format: 3, bytes: 8, make: (n) => new Float64Array(n) },
};

/** The sample type of a typed array. */
export function sampleTypeOf(data: RasterArray): SampleType {
  if (data instanceof Float32Array) return 'float32';
  if (data instanceof Float64Array) return 'float64';
  if (data instanceof Int16Array) return 'int16';
  if (data instanceof Uint16Array) return 'uint16';
  if (data instanceof Int32Array) return 'int32';
  if (data instanceof Uint32Array) return 'uint32';
  if (data instanceof Int8Array) return 'int8';
  return 'uint8';
}

// GeoTIFF 1.1 §7: GTModelTypeGeoKey 1024, GTRasterTypeGeoKey 1025,
// GeographicTypeGeoKey 2048, GeogAngularUnitsGeoKey 2054, ProjectedCSTypeGeoKey 3072, ProjLinearUnitsGeoKey 3076.
function geoKeyDirectory(epsg: number, kind: 'geographic' | 'projected', rasterType: 'area' | 'point'): number[] {
  const keys: [number, number][] = [
    [1024, kind === 'geographic' ? 2 : 1],
    [1025, rasterType === 'area' ? 1 : 2],
  ];
  if (kind === 'geographic') {
    keys.push([2048, epsg], [2054, 9102]);
  } else {
    keys.push([3072, epsg], [3076, 9001]);
  }
  const out = [1, 1, 0, keys.length];
  for (const [id, value] of keys) out.push(id, 0, 1, value);
  return out;
}

function validateCommon(options: Omit<GeoTiffOptions, 'data'>): void {
  const { widthPx, heightPx, geoTransform } = options;
  if (!Number.isInteger(widthPx) || widthPx < 1 || !Number.isInteger(heightPx) || heightPx < 1) {
    throw new RangeError(`writeGeoTiff: widthPx and heightPx must be positive integers (got ${widthPx} × ${heightPx})`);
  }
  if (geoTransform.length !== 6 || !geoTransform.every(Number.isFinite)) {
    throw new RangeError('writeGeoTiff: geoTransform must be 6 finite numbers in GDAL order');
  }
  if (geoTransform[2] !== 0 || geoTransform[4] !== 0) {
    throw new RangeError('writeGeoTiff: rotated geoTransforms are not supported (terms 2 and 4 must be 0)');
  }
  if (!(geoTransform[1] > 0) || !(geoTransform[5] < 0)) {
    throw new RangeError('writeGeoTiff: geoTransform needs pixelSizeX > 0 and a negative pixel height (north-up)');
  }
  if (options.tiled && (!Number.isInteger(options.tiled.tileSizePx) || options.tiled.tileSizePx < 16 || options.tiled.tileSizePx % 16 !== 0)) {
    throw new RangeError('writeGeoTiff: tiled.tileSizePx must be a positive multiple of 16 (TIFF 6.0 §15)');
  }
}

interface LevelPlan {
  widthPx: number;
  heightPx: number;
  factor: number;
  blockW: number;
  blockH: number;
  blocksAcross: number;
  blocksDown: number;
}

function planLevels(options: Omit<GeoTiffOptions, 'data'>, factors: number[], bytesPerSample: number): LevelPlan[] {
  const levels: LevelPlan[] = [];
  for (const factor of [1, ...factors]) {
    if (!Number.isInteger(factor) || factor < 1) throw new RangeError('writeGeoTiff: overview factors must be positive integers');
    const widthPx = Math.max(1, Math.ceil(options.widthPx / factor));
    const heightPx = Math.max(1, Math.ceil(options.heightPx / factor));
    let blockW: number;
    let blockH: number;
    if (options.tiled) {
      blockW = options.tiled.tileSizePx;
      blockH = options.tiled.tileSizePx;
    } else {
      blockW = widthPx;
      blockH = options.rowsPerStrip ?? Math.max(1, Math.floor(8192 / (widthPx * bytesPerSample)));
      blockH = Math.min(blockH, heightPx);
    }
    levels.push({ widthPx, heightPx, factor, blockW, blockH, blocksAcross: Math.ceil(widthPx / blockW), blocksDown: Math.ceil(heightPx / blockH) });
  }
  return levels;
}

function levelFields(options: Omit<GeoTiffOptions, 'data'>, level: LevelPlan, index: number, sampleType: SampleType, offsets: number[], counts: number[]): Field[] {
  const info = sampleInfo[sampleType];
  const fields: Field[] = [];
  if (index > 0) fields.push({ tag: TAG.NewSubfileType, type: LONG, values: [1] });
  fields.push(
    { tag: TAG.ImageWidth, type: LONG, values: [level.widthPx] },
    { tag: TAG.ImageLength, type: LONG, values: [level.heightPx] },
    { tag: TAG.BitsPerSample, type: SHORT, values: [info.bits] },
    { tag: TAG.Compression, type: SHORT, values: [options.compression === 'deflate' ? 8 : 1] },
    { tag: TAG.Photometric, type: SHORT, values: [1] },
  );
  if (!options.tiled) fields.push({ tag: TAG.StripOffsets, type: LONG, values: offsets });
  fields.push({ tag: TAG.SamplesPerPixel, type: SHORT, values: [1] });
  if (!options.tiled) {
    fields.push({ tag: TAG.RowsPerStrip, type: LONG, values: [level.blockH] }, { tag: TAG.StripByteCounts, type: LONG, values: counts });
  }
  fields.push({ tag: TAG.PlanarConfiguration, type: SHORT, values: [1] });
  if (options.tiled) {
    fields.push(
      { tag: TAG.TileWidth, type: LONG, values: [level.blockW] },
      { tag: TAG.TileLength, type: LONG, values: [level.blockH] },
      { tag: TAG.TileOffsets, type: LONG, values: offsets },
      { tag: TAG.TileByteCounts, type: LONG, values: counts },
    );
  }
  fields.push({ tag: TAG.SampleFormat, type: SHORT, values: [info.format] });
  if (index === 0) {
    const [originX, pixelX, , originY, , pixelYNeg] = options.geoTransform;
    const pixelY = -pixelYNeg;
    const rasterType = options.rasterType ?? 'area';
    // Pixel-is-point: the tiepoint names the centre of pixel (0,0) (GeoTIFF 1.1 §B.2).
    const tieX = rasterType === 'point' ? originX + pixelX / 2 : originX;
    const tieY = rasterType === 'point' ? originY - pixelY / 2 : originY;
    const kind = options.crsKind ?? crsKindForEpsg(options.epsg);
    fields.push(
      { tag: TAG.ModelPixelScale, type: DOUBLE, values: [pixelX, pixelY, 0] },
      { tag: TAG.ModelTiepoint, type: DOUBLE, values: [0, 0, 0, tieX, tieY, 0] },
      { tag: TAG.GeoKeyDirectory, type: SHORT, values: geoKeyDirectory(options.epsg, kind, rasterType) },
    );
  }
  if (index === 0 && (options.scale !== undefined || options.offset !== undefined)) {
    const items = [
      options.offset !== undefined ? `<Item name="OFFSET" sample="0" role="offset">${options.offset}</Item>` : '',
      options.scale !== undefined ? `<Item name="SCALE" sample="0" role="scale">${options.scale}</Item>` : '',
    ].join('');
    fields.push({ tag: TAG.GDAL_METADATA, type: ASCII, values: `<GDALMetadata>${items}</GDALMetadata>\0` });
  }
  if (options.noData !== undefined) fields.push({ tag: TAG.GDAL_NODATA, type: ASCII, values: `${formatNoData(options.noData)}\0` });
  return fields;
}

function formatNoData(value: number): string {
  if (Number.isNaN(value)) return 'nan';
  return String(value);
}

function fieldBytes(field: Field): number {
  const count = typeof field.values === 'string' ? field.values.length : field.values.length;
  return count * typeSize[field.type];
}

/** Bytes of one IFD and its out-of-line values (word aligned). */
function ifdSize(fields: Field[]): number {
  let size = 2 + fields.length * 12 + 4;
  for (const field of fields) {
    const bytes = fieldBytes(field);
    if (bytes > 4) size += bytes + (bytes % 2);
  }
  return size;
}

function writeIfd(view: DataView, at: number, fields: Field[], nextIfd: number): void {
  view.setUint16(at, fields.length, true);
  let extra = at + 2 + fields.length * 12 + 4;
  fields.forEach((field, i) => {
    const entry = at + 2 + i * 12;
    const count = field.values.length;
    const bytes = fieldBytes(field);
    view.setUint16(entry, field.tag, true);
    view.setUint16(entry + 2, field.type, true);
    view.setUint32(entry + 4, count, true);
    let target = entry + 8;
    if (bytes > 4) {
      view.setUint32(entry + 8, extra, true);
      target = extra;
      extra += bytes + (bytes % 2);
    }
    for (let k = 0; k < count; k++) {
      if (typeof field.values === 'string') view.setUint8(target + k, field.values.charCodeAt(k));
      else if (field.type === SHORT) view.setUint16(target + 2 * k, field.values[k], true);
      else if (field.type === LONG) view.setUint32(target + 4 * k, field.values[k], true);
      else view.setFloat64(target + 8 * k, field.values[k], true);
    }
  });
  view.setUint32(at + 2 + fields.length * 12, nextIfd, true);
}

function encodeBlock(block: RasterArray, compression: 'none' | 'deflate' | undefined): Uint8Array {
  const raw = new Uint8Array(block.buffer, block.byteOffset, block.byteLength);
  // node:zlib only when deflating (an uncompressed write, the CLI's los raster, does not load it).
  return compression === 'deflate' ? process.getBuiltinModule('node:zlib').deflateSync(raw) : raw;
}

/** Copies a window of a row-major raster into a fresh block of blockW × blockH (padding with `fill`). */
function cutBlock(source: RasterArray, sourceWidth: number, sourceHeight: number, x0: number, y0: number, blockW: number, blockH: number, fill: number, make: (n: number) => RasterArray): RasterArray {
  const block = make(blockW * blockH);
  if (fill !== 0) block.fill(fill);
  const w = Math.min(blockW, sourceWidth - x0);
  const h = Math.min(blockH, sourceHeight - y0);
  for (let row = 0; row < h; row++) {
    const start = (y0 + row) * sourceWidth + x0;
    block.set(source.subarray(start, start + w), row * blockW);
  }
  return block;
}

/** Nearest-sample decimation of a raster by an integer factor (sample at the block centre). */
function decimate(source: RasterArray, width: number, height: number, factor: number, make: (n: number) => RasterArray): { data: RasterArray; widthPx: number; heightPx: number } {
  const widthPx = Math.max(1, Math.ceil(width / factor));
  const heightPx = Math.max(1, Math.ceil(height / factor));
  const data = make(widthPx * heightPx);
  const half = Math.floor(factor / 2);
  for (let y = 0; y < heightPx; y++) {
    const sy = Math.min(height - 1, y * factor + half);
    for (let x = 0; x < widthPx; x++) {
      const sx = Math.min(width - 1, x * factor + half);
      data[y * widthPx + x] = source[sy * width + sx];
    }
  }
  return { data, widthPx, heightPx };
}

function representable(sampleType: SampleType, value: number): boolean {
  if (sampleType === 'float32' || sampleType === 'float64') return true;
  const info = sampleInfo[sampleType];
  const probe = info.make(1);
  probe[0] = value;
  return probe[0] === value;
}

/** Writes a single-band GeoTIFF into memory and returns its bytes. */
export function writeGeoTiff(options: GeoTiffOptions): Uint8Array {
  validateCommon(options);
  const { data, widthPx, heightPx } = options;
  if (data.length !== widthPx * heightPx) {
    throw new RangeError(`writeGeoTiff: data has ${data.length} samples, expected ${widthPx} × ${heightPx} = ${widthPx * heightPx}`);
  }
  const sampleType = sampleTypeOf(data);
  const info = sampleInfo[sampleType];
  const levels = planLevels(options, options.overviews ?? [], info.bytes);
  const fill = options.noData !== undefined && representable(sampleType, options.noData) ? options.noData : 0;

  const blocksPerLevel: Uint8Array[][] = levels.map((level) => {
    const source = level.factor === 1 ? { data, widthPx, heightPx } : decimate(data, widthPx, heightPx, level.factor, info.make);
    const blocks: Uint8Array[] = [];
    for (let by = 0; by < level.blocksDown; by++) {
      for (let bx = 0; bx < level.blocksAcross; bx++) {
        // Strips are exactly as tall as the rows they hold; tiles are always full size (TIFF 6.0 §15).
        const h = options.tiled ? level.blockH : Math.min(level.blockH, level.heightPx - by * level.blockH);
        const block = cutBlock(source.data, source.widthPx, source.heightPx, bx * level.blockW, by * level.blockH, level.blockW, h, fill, info.make);
        blocks.push(encodeBlock(block, options.compression));
      }
    }
    return blocks;
  });

  const placeholder = (n: number) => new Array<number>(n).fill(0);
  const ifdSizes = levels.map((level, i) => ifdSize(levelFields(options, level, i, sampleType, placeholder(level.blocksAcross * level.blocksDown), placeholder(level.blocksAcross * level.blocksDown))));
  const headerBytes = 8;
  const ifdStarts: number[] = [];
  let cursor = headerBytes;
  for (const size of ifdSizes) {
    ifdStarts.push(cursor);
    cursor += size;
  }
  const offsetsPerLevel: number[][] = [];
  const countsPerLevel: number[][] = [];
  for (const blocks of blocksPerLevel) {
    const offsets: number[] = [];
    const counts: number[] = [];
    for (const block of blocks) {
      offsets.push(cursor);
      counts.push(block.byteLength);
      cursor += block.byteLength;
    }
    offsetsPerLevel.push(offsets);
    countsPerLevel.push(counts);
  }
  if (cursor > 0xffffffff) throw new RangeError('writeGeoTiff: output exceeds 4 GiB (classic TIFF limit); use writeGeoTiffFile with compression');
  const out = new Uint8Array(cursor);
  const view = new DataView(out.buffer);
  out[0] = 0x49;
  out[1] = 0x49;
  view.setUint16(2, 42, true);
  view.setUint32(4, ifdStarts[0], true);
  levels.forEach((level, i) => {
    const fields = levelFields(options, level, i, sampleType, offsetsPerLevel[i], countsPerLevel[i]);
    writeIfd(view, ifdStarts[i], fields, i + 1 < levels.length ? ifdStarts[i + 1] : 0);
    blocksPerLevel[i].forEach((block, k) => out.set(block, offsetsPerLevel[i][k]));
  });
  return out;
}

/**
 * Writes a single-band GeoTIFF to a file block by block (memory: one block at a time plus the offset tables).
 * IFDs are reserved at the start of the file and filled in once every block has been written.
 */
export function writeGeoTiffFile(path: string, options: GeoTiffFileOptions): { bytes: number } {
  validateCommon(options);
  const info = sampleInfo[options.sampleType];
  const levels = planLevels(options, options.overviewFactors ?? [], info.bytes);
  const placeholder = (n: number) => new Array<number>(n).fill(0);
  const ifdSizes = levels.map((level, i) => ifdSize(levelFields(options, level, i, options.sampleType, placeholder(level.blocksAcross * level.blocksDown), placeholder(level.blocksAcross * level.blocksDown))));
  const ifdStarts: number[] = [];
  let cursor = 8;
  for (const size of ifdSizes) {
    ifdStarts.push(cursor);
    cursor += size;
  }
  const headerLength = cursor;
  const fd = openSync(path, 'w');
  try {
    const offsetsPerLevel: number[][] = [];
    const countsPerLevel: number[][] = [];
    levels.forEach((level, index) => {
      const offsets: number[] = [];
      const counts: number[] = [];
      for (let by = 0; by < level.blocksDown; by++) {
        for (let bx = 0; bx < level.blocksAcross; bx++) {
          const x0 = bx * level.blockW;
          const y0 = by * level.blockH;
          const w = Math.min(level.blockW, level.widthPx - x0);
          const h = Math.min(level.blockH, level.heightPx - y0);
          const window = options.readBlock(index, x0, y0, w, h);
          const blockH = options.tiled ? level.blockH : h;
          const block = w === level.blockW && h === blockH ? window : cutBlock(window, w, h, 0, 0, level.blockW, blockH, options.noData ?? 0, info.make);
          const encoded = encodeBlock(block, options.compression);
          writeSync(fd, encoded, 0, encoded.byteLength, cursor);
          offsets.push(cursor);
          counts.push(encoded.byteLength);
          cursor += encoded.byteLength;
          if (cursor > 0xffffffff) throw new RangeError('writeGeoTiffFile: output exceeds 4 GiB (classic TIFF limit)');
        }
      }
      offsetsPerLevel.push(offsets);
      countsPerLevel.push(counts);
    });
    const head = new Uint8Array(headerLength);
    const view = new DataView(head.buffer);
    head[0] = 0x49;
    head[1] = 0x49;
    view.setUint16(2, 42, true);
    view.setUint32(4, ifdStarts[0], true);
    levels.forEach((level, i) => {
      writeIfd(view, ifdStarts[i], levelFields(options, level, i, options.sampleType, offsetsPerLevel[i], countsPerLevel[i]), i + 1 < levels.length ? ifdStarts[i + 1] : 0);
    });
    writeSync(fd, head, 0, head.byteLength, 0);
  } finally {
    closeSync(fd);
  }
  return { bytes: cursor };
}
