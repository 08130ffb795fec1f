// One georeferenced single-band raster read through geotiff.js: its grid,
// CRS, NoData and scale/offset, and windows of samples as Float32 (NaN for
// NoData). A file is opened with geotiff's fromFile, so only the header and
// the tiles/strips a window touches are ever read from disk.
import { open, stat } from 'node:fs/promises';
import { fromArrayBuffer, fromFile, getDecoder, type GeoTIFF, type GeoTIFFImage, type TypedArray } from 'geotiff';
import { inspectTiff } from './tiff-structure.ts';
import { BoundedInflateDecoder, BoundedLzwDecoder, BoundedPackBitsDecoder } from './tiff-decoders.ts';
import { RasterError } from './raster-error.ts';
import { crsForEpsg, transformForCrs, UnsupportedCrsError, type CrsInfo, type CrsTransform } from './crs.ts';
import type { GeoTransform } from './geotiff-writer.ts';

export type { GeoTransform } from './geotiff-writer.ts';

export { RasterError, type RasterErrorCode } from './raster-error.ts';

export interface Bounds {
  minX: number;
  minY: number;
  maxX: number;
  maxY: number;
}

export interface LonLatBounds {
  west: number;
  south: number;
  east: number;
  north: number;
}

export interface OverviewInfo {
  widthPx: number;
  heightPx: number;
  /** Full-resolution pixels per overview pixel along x. */
  factor: number;
}

/** How the store caches this raster: blocks of blockWidthPx × blockHeightPx (edge blocks smaller). */
export interface BlockLayout {
  blockWidthPx: number;
  blockHeightPx: number;
  blocksAcross: number;
  blocksDown: number;
}

export type SampleFormat = 'uint8' | 'int8' | 'uint16' | 'int16' | 'uint32' | 'int32' | 'float32' | 'float64';

export interface GeoRaster {
  widthPx: number;
  heightPx: number;
  /** GDAL order, pixel-is-area corner convention: x = gt[0] + col·gt[1], y = gt[3] + row·gt[5] at pixel corners. */
  geoTransform: GeoTransform;
  crs: { epsg: number; proj4: string; kind: 'geographic' | 'projected'; name: string };
  /** NoData value in raw sample units (before scale/offset), or null. */
  noData: number | null;
  scale: number;
  offset: number;
  /** The file's GTRasterTypeGeoKey; the geoTransform above is already converted to the corner convention. */
  rasterType: 'area' | 'point';
  /** Extent in CRS units (outer pixel edges). */
  bounds: Bounds;
  /** Extent in WGS 84 degrees (the CRS extent's corners and edge points transformed; for projected CRSs, the enclosing box). */
  boundsLonLat: LonLatBounds;
  /** Approximate pixel size in metres along x and y at the raster centre. */
  resolutionM: { x: number; y: number };
  sampleFormat: SampleFormat;
  compression: string;
  tiled: boolean;
  /** Native tile or strip size. */
  nativeBlock: { widthPx: number; heightPx: number };
  overviews: OverviewInfo[];
  blockLayout: BlockLayout;
  /** Reads a window of the full-resolution image (or of overview `level` ≥ 1) as Float32 with NaN for NoData, scale/offset applied. */
  readWindow(x0: number, y0: number, w: number, h: number, level?: number): Promise<Float32Array>;
  /** Reads cache block (bx, by) of blockLayout (width/height = the block's actual size). */
  readBlock(bx: number, by: number): Promise<{ data: Float32Array; widthPx: number; heightPx: number }>;
  /** Pixels of the file's tiles/strips a readWindow of this window decodes (a stripped file decodes whole rows). */
  blockCellsTouched(x0: number, y0: number, w: number, h: number, level?: number): number;
  /** Continuous pixel coordinates (corner convention: pixel (i, j) spans [i, i+1) × [j, j+1)) of a WGS 84 position. */
  lonLatToPixel(lon: number, lat: number): { x: number; y: number };
  /** WGS 84 position of continuous pixel coordinates (x + 0.5, y + 0.5 is the centre of pixel (x, y)). */
  pixelToLonLat(x: number, y: number): { lon: number; lat: number };
  /** The WGS 84 ↔ CRS transform used by the two helpers above. */
  transform: CrsTransform;
  /** Size of the file (or buffer) in bytes. */
  fileBytes: number;
  /** Checks that every tile/strip of every image lies inside the file (a truncated upload fails here); throws RasterError 'corrupt'. */
  verifyBlockExtents(): Promise<void>;
  close(): Promise<void>;
}

// TIFF compression codes we read (TIFF 6.0 §3, §9, §13; Adobe deflate 8 and the old 32946).
const COMPRESSION_NAMES: Record<number, string> = { 1: 'none', 5: 'LZW', 8: 'deflate', 32946: 'deflate', 32773: 'PackBits' };
const OTHER_COMPRESSION_NAMES: Record<number, string> = {
  2: 'CCITT RLE', 3: 'CCITT Group 3', 4: 'CCITT Group 4', 6: 'old JPEG', 7: 'JPEG', 34887: 'LERC', 34925: 'LZMA', 50000: 'ZSTD', 50001: 'WebP', 50002: 'JPEG XL',
};

const MAX_CACHE_BLOCK_BYTES = 4 * 1024 * 1024;
/** Decoded tile/strip bytes one window read holds at a time (at least one block). */
const WINDOW_DECODE_BYTES = 16 * 1024 * 1024;
/** Sample formats whose every value Float32 represents exactly (so a converted sample equals NoData iff the raw one did). */
const EXACT_IN_FLOAT32: ReadonlySet<SampleFormat> = new Set(['uint8', 'int8', 'uint16', 'int16', 'float32']);

function formatOf(sampleFormat: number, bits: number): SampleFormat | null {
  if (sampleFormat === 1 && bits === 8) return 'uint8';
  if (sampleFormat === 2 && bits === 8) return 'int8';
  if (sampleFormat === 1 && bits === 16) return 'uint16';
  if (sampleFormat === 2 && bits === 16) return 'int16';
  if (sampleFormat === 1 && bits === 32) return 'uint32';
  if (sampleFormat === 2 && bits === 32) return 'int32';
  if (sampleFormat === 3 && bits === 32) return 'float32';
  if (sampleFormat === 3 && bits === 64) return 'float64';
  return null;
}

type Directory = ReturnType<GeoTIFFImage['getFileDirectory']>;

function tagNumbers(directory: Directory, name: string): number[] | null {
  if (!directory.hasTag(name as never)) return null;
  const value = directory.getValue(name as never) as unknown;
  if (value === undefined || value === null) return null;
  if (typeof value === 'number') return [value];
  if (ArrayLike(value)) return Array.from(value as ArrayLike<number>, Number);
  return null;
}

function ArrayLike(value: unknown): boolean {
  return Array.isArray(value) || ArrayBuffer.isView(value);
}

export interface OpenRasterOptions {
  /**
   * Decoded tiles readWindow keeps (least recently used first out; default 0 = none). A caller
   * reading many overlapping windows in turn (the report map: every file tile lies under ~4 map
   * tiles) decodes each tile once instead of once per window.
   */
  decodedTileCache?: number;
}

/** Opens a GeoTIFF from a path (read lazily from disk) or from bytes in memory and checks it is usable. */
export async function openGeoRaster(source: string | ArrayBuffer, options: OpenRasterOptions = {}): Promise<GeoRaster> {
  let tiff: GeoTIFF;
  let fileBytes = 0;
  try {
    fileBytes = typeof source === 'string' ? (await stat(source)).size : source.byteLength;
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    throw new RasterError('not_tiff', /ENOENT/.test(message) ? `file not found: ${typeof source === 'string' ? source : '(buffer)'}` : `cannot read the file (${message.split('\n')[0]})`);
  }
  // A bounded walk over the directories first: geotiff itself would follow an IFD loop forever.
  const structure = await inspectTiff(source);
  try {
    tiff = typeof source === 'string' ? await fromFile(source) : await fromArrayBuffer(source);
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    if (/ENOENT/.test(message)) throw new RasterError('not_tiff', `file not found: ${typeof source === 'string' ? source : '(buffer)'}`);
    throw new RasterError('not_tiff', `not a TIFF file (${message.split('\n')[0]})`);
  }
  try {
    return await describe(tiff, fileBytes, structure.images.length, typeof source === 'string' ? source : null, Math.max(0, Math.floor(options.decodedTileCache ?? 0)));
  } catch (error) {
    await closeQuietly(tiff);
    if (error instanceof RasterError) throw error;
    if (error instanceof UnsupportedCrsError) throw new RasterError('unsupported_crs', error.message);
    const message = error instanceof Error ? error.message : String(error);
    throw new RasterError('corrupt', `unreadable TIFF structure (${message.split('\n')[0]})`);
  }
}

async function closeQuietly(tiff: GeoTIFF): Promise<void> {
  try {
    const closing = tiff.close();
    if (closing) await closing;
  } catch {
    // already closed
  }
}

/** How stored samples become metres: NoData (GDAL_NODATA; null = none, NaN = NaN) and GDAL's scale/offset. */
interface SampleConversion {
  sampleFormat: SampleFormat;
  noData: number | null;
  scale: number;
  offset: number;
}

/** The GDAL_NODATA tag and the GDAL_METADATA scale/offset of the first image. */
async function readSampleConversion(image: GeoTIFFImage, directory: Directory): Promise<Omit<SampleConversion, 'sampleFormat'>> {
  const noDataText = directory.hasTag('GDAL_NODATA') ? String(directory.getValue('GDAL_NODATA')).replace(/\0+$/, '').trim() : '';
  const noData = noDataText === '' ? null : noDataText.toLowerCase() === 'nan' ? Number.NaN : Number(noDataText);
  if (noData !== null && Number.isNaN(noData) && noDataText.toLowerCase() !== 'nan') throw new RasterError('corrupt', `GDAL_NODATA tag "${noDataText}" is not a number`);
  let scale = 1;
  let offset = 0;
  const metadata = await image.getGDALMetadata(0);
  if (metadata) {
    if (metadata.SCALE !== undefined) scale = Number(metadata.SCALE);
    if (metadata.OFFSET !== undefined) offset = Number(metadata.OFFSET);
    if (!Number.isFinite(scale) || !Number.isFinite(offset)) throw new RasterError('corrupt', 'GDAL_METADATA scale/offset is not a number');
  }
  return { noData, scale, offset };
}

/** The reduced-resolution images (overviews) after the first, largest first as stored; masks are skipped. */
async function readOverviews(tiff: GeoTIFF, imageCount: number, widthPx: number): Promise<{ overviews: OverviewInfo[]; overviewImages: GeoTIFFImage[] }> {
  const overviews: OverviewInfo[] = [];
  const overviewImages: GeoTIFFImage[] = [];
  for (let i = 1; i < imageCount; i++) {
    const candidate = await tiff.getImage(i);
    const subfileType = tagNumbers(candidate.getFileDirectory(), 'NewSubfileType')?.[0] ?? 0;
    // Bit 0: reduced-resolution version; bit 2: transparency mask (skipped).
    if ((subfileType & 1) === 1 && (subfileType & 4) === 0 && candidate.getWidth() < widthPx) {
      overviews.push({ widthPx: candidate.getWidth(), heightPx: candidate.getHeight(), factor: widthPx / candidate.getWidth() });
      overviewImages.push(candidate);
    }
  }
  return { overviews, overviewImages };
}

/** NoData as the stored samples compare it: in the sample's own precision (a Float32 NoData such as -3.4028235e38 is not exactly the double); null = none or NaN (NaN stays NaN through scale/offset). */
function comparableNoData({ noData, sampleFormat }: SampleConversion): number | null {
  return noData === null || Number.isNaN(noData) ? null : sampleFormat === 'float32' ? Math.fround(noData) : noData;
}

/** Stored samples → metres (scale, offset), NoData → NaN. */
function samplesToFloat(raw: TypedArray, conversion: SampleConversion): Float32Array {
  const { scale, offset } = conversion;
  const nd = comparableNoData(conversion);
  const out = new Float32Array(raw.length);
  const n = raw.length;
  if (nd === null) {
    for (let i = 0; i < n; i++) out[i] = raw[i] * scale + offset;
  } else {
    for (let i = 0; i < n; i++) {
      const v = raw[i];
      out[i] = v === nd ? Number.NaN : v * scale + offset;
    }
  }
  return out;
}

/**
 * The fast window read: decodes each tile/strip the window touches once and converts it row by row
 * straight into the Float32 window (see the fast-path note in describe).
 */
async function readBlocksIntoWindow(
  img: GeoTIFFImage,
  decoder: Decoder,
  window: { x0: number; y0: number; w: number; h: number },
  conversion: SampleConversion,
  bytesPerSample: number,
  file: { path: string; fileBytes: number } | null,
  decodeTile: (tx: number, ty: number) => Promise<ArrayBuffer> = async (tx, ty) => (await img.getTileOrStrip(tx, ty, 0, decoder as never)).data as ArrayBuffer,
): Promise<Float32Array> {
  const { x0, y0, w, h } = window;
  const { sampleFormat, scale, offset } = conversion;
  const nd = comparableNoData(conversion);
  const tileW = img.getTileWidth();
  const tileH = img.getTileHeight();
  const tx0 = Math.floor(x0 / tileW);
  const tx1 = Math.floor((x0 + w - 1) / tileW);
  const ty0 = Math.floor(y0 / tileH);
  const ty1 = Math.floor((y0 + h - 1) / tileH);
  const out = new Float32Array(w * h);
  // Samples that Float32 holds exactly, unscaled: blocks are copied row by row with TypedArray#set and
  // NoData is then found with indexOf (both native, same values as the per-sample loop below).
  const copyNative = scale === 1 && offset === 0 && EXACT_IN_FLOAT32.has(sampleFormat);
  const finish = (): Float32Array => {
    if (copyNative && nd !== null) for (let i = out.indexOf(nd); i !== -1; i = out.indexOf(nd, i + 1)) out[i] = Number.NaN;
    return out;
  };
  const copyBlock = (tx: number, ty: number, values: TypedArray) => {
    const blockH = img.getBlockHeight(ty);
    // Part of this block inside the window, in block coordinates.
    const bx0 = Math.max(0, x0 - tx * tileW);
    const bx1 = Math.min(tileW, x0 + w - tx * tileW);
    const by0 = Math.max(0, y0 - ty * tileH);
    const by1 = Math.min(blockH, y0 + h - ty * tileH);
    for (let by = by0; by < by1; by++) {
      let src = by * tileW + bx0;
      let dst = (ty * tileH + by - y0) * w + tx * tileW + bx0 - x0;
      const end = src + (bx1 - bx0);
      if (copyNative) {
        // Typed-array copy (converts natively; a cold process would run a JavaScript loop interpreted).
        out.set(values.subarray(src, end), dst);
      } else if (nd === null) {
        // No NoData, or NoData NaN (NaN stays NaN through scale/offset).
        if (scale === 1 && offset === 0) for (; src < end; src++, dst++) out[dst] = values[src];
        else for (; src < end; src++, dst++) out[dst] = values[src] * scale + offset;
      } else {
        // Compared in the sample's own precision (a Float32 NoData such as -3.4028235e38 is not exactly the double).
        for (; src < end; src++, dst++) {
          const v = values[src];
          out[dst] = v === nd ? Number.NaN : v * scale + offset;
        }
      }
    }
  };
  const across = tx1 - tx0 + 1;
  const count = across * (ty1 - ty0 + 1);
  if (file !== null && (await readUncompressed(img, file, { tx0, ty0, across, count }, sampleFormat, bytesPerSample, copyBlock))) return finish();
  // Blocks are decoded a few at a time and copied at once, so a window over a stripped raster (every
  // strip is the full width) holds at most WINDOW_DECODE_BYTES of decoded blocks, not all of them.
  const lanes = Math.max(1, Math.min(16, count, Math.floor(WINDOW_DECODE_BYTES / (tileW * tileH * bytesPerSample))));
  let next = 0;
  const lane = async () => {
    while (next < count) {
      const index = next++;
      const tx = tx0 + (index % across);
      const ty = ty0 + Math.floor(index / across);
      copyBlock(tx, ty, typedView(sampleFormat, await decodeTile(tx, ty), 0, tileW * img.getBlockHeight(ty)));
    }
  };
  await Promise.all(Array.from({ length: lanes }, lane));
  return finish();
}

// Uncompressed blocks of a file need no decoder: the window's blocks are read straight from the file,
// neighbours (a writer puts them one after another) in one read of at most WINDOW_DECODE_BYTES, and
// copied from views of that buffer (one read instead of geotiff's fetch of 64 KiB pieces per block,
// each assembled into a fresh buffer). Returns false, having read nothing, when a block is sparse
// (byte count 0), shorter than its pixels or beyond the end of the file: the decoder path handles
// (or refuses) those exactly as before.
async function readUncompressed(
  img: GeoTIFFImage,
  { path: file, fileBytes }: { path: string; fileBytes: number },
  { tx0, ty0, across, count }: { tx0: number; ty0: number; across: number; count: number },
  sampleFormat: SampleFormat,
  bytesPerSample: number,
  copyBlock: (tx: number, ty: number, values: TypedArray) => void,
): Promise<boolean> {
  const dir = img.getFileDirectory();
  if (Number(dir.getValue('Compression' as never) ?? 1) !== 1) return false;
  const tileW = img.getTileWidth();
  const perRow = Math.ceil(img.getWidth() / tileW);
  const offsetsTag = img.isTiled ? 'TileOffsets' : 'StripOffsets';
  const countsTag = img.isTiled ? 'TileByteCounts' : 'StripByteCounts';
  const blocks: { tx: number; ty: number; offset: number; bytes: number }[] = [];
  for (let k = 0; k < count; k++) {
    const tx = tx0 + (k % across);
    const ty = ty0 + Math.floor(k / across);
    const index = ty * perRow + tx;
    const offset = Number(await dir.loadValueIndexed(offsetsTag, index));
    const stored = Number(await dir.loadValueIndexed(countsTag, index));
    const bytes = tileW * img.getBlockHeight(ty) * bytesPerSample;
    if (!(stored >= bytes && offset >= 0 && offset + bytes <= fileBytes)) return false;
    blocks.push({ tx, ty, offset, bytes });
  }
  blocks.sort((a, b) => a.offset - b.offset);
  const handle = await open(file, 'r');
  try {
    for (let first = 0; first < blocks.length; ) {
      // A run of blocks whose span stays within the cap and has no gap above 1 MiB (always at least one block).
      const start = blocks[first].offset;
      let last = first;
      while (
        last + 1 < blocks.length &&
        blocks[last + 1].offset + blocks[last + 1].bytes - start <= WINDOW_DECODE_BYTES &&
        blocks[last + 1].offset - (blocks[last].offset + blocks[last].bytes) <= 1024 * 1024
      ) {
        last++;
      }
      const span = Math.max(...blocks.slice(first, last + 1).map((b) => b.offset + b.bytes)) - start;
      const buffer = new ArrayBuffer(span);
      const { bytesRead } = await handle.read(new Uint8Array(buffer), 0, span, start);
      if (bytesRead < span) throw new RasterError('corrupt', `the file ended ${span - bytesRead} bytes early inside a ${img.isTiled ? 'tile' : 'strip'}`);
      for (let k = first; k <= last; k++) {
        const block = blocks[k];
        copyBlock(block.tx, block.ty, typedView(sampleFormat, buffer, block.offset - start, block.bytes / bytesPerSample));
      }
      first = last + 1;
    }
  } finally {
    await handle.close();
  }
  return true;
}

/** Every tile/strip table of every image is consistent, each block's byte count is plausible and each block lies inside the file. */
async function verifyImageBlockExtents(images: GeoTIFFImage[], fileBytes: number): Promise<void> {
  for (let level = 0; level < images.length; level++) {
    const dir = images[level].getFileDirectory();
    const tiledImage = dir.hasTag('TileOffsets');
    let offsets: ArrayLike<number | bigint> | undefined;
    let counts: ArrayLike<number | bigint> | undefined;
    try {
      offsets = (await dir.loadValue(tiledImage ? 'TileOffsets' : 'StripOffsets')) as ArrayLike<number | bigint> | undefined;
      counts = (await dir.loadValue(tiledImage ? 'TileByteCounts' : 'StripByteCounts')) as ArrayLike<number | bigint> | undefined;
    } catch (error) {
      throw new RasterError('corrupt', `the ${tiledImage ? 'tile' : 'strip'} table of image ${level} cannot be read (${error instanceof Error ? error.message : String(error)})`);
    }
    if (!offsets || !counts || offsets.length !== counts.length) throw new RasterError('corrupt', `image ${level} has no consistent ${tiledImage ? 'tile' : 'strip'} offset/byte-count tables`);
    const img = images[level];
    const expected = tiledImage
      ? Math.ceil(img.getWidth() / img.getTileWidth()) * Math.ceil(img.getHeight() / img.getTileHeight())
      : Math.ceil(img.getHeight() / img.getTileHeight());
    if (offsets.length < expected) throw new RasterError('corrupt', `image ${level} lists ${offsets.length} ${tiledImage ? 'tiles' : 'strips'}, its size needs ${expected}`);
    // A compressed block is never much larger than its decoded size (LZW at worst ~1.5×); a larger
    // byte count is a lie that would make one read pull that many bytes from the file.
    const img0 = images[level];
    const bitsPerPixel = dir.getValue('PlanarConfiguration' as never) === 2 ? img0.getBitsPerSample(0) : img0.getBitsPerSample(0) * img0.getSamplesPerPixel();
    const maxStored = 2 * Math.ceil((img0.getTileWidth() * bitsPerPixel) / 8) * img0.getTileHeight() + 65_536;
    for (let i = 0; i < offsets.length; i++) {
      if (Number(counts[i]) > maxStored) {
        throw new RasterError('corrupt', `${tiledImage ? 'tile' : 'strip'} ${i} of image ${level} claims ${Number(counts[i])} stored bytes, more than its pixels could need`);
      }
      const end = Number(offsets[i]) + Number(counts[i]);
      if (!(end <= fileBytes)) {
        throw new RasterError('corrupt', `the file is truncated or corrupt: ${tiledImage ? 'tile' : 'strip'} ${i} of image ${level} ends at byte ${end}, the file has ${fileBytes}`);
      }
    }
  }
}

async function describe(tiff: GeoTIFF, fileBytes: number, imageCount: number, path: string | null, decodedTileCache: number): Promise<GeoRaster> {
  const image = await tiff.getImage(0);
  const directory = image.getFileDirectory();
  const widthPx = image.getWidth();
  const heightPx = image.getHeight();
  if (!(widthPx > 0 && heightPx > 0)) throw new RasterError('unsupported_layout', `raster has no pixels (${widthPx} × ${heightPx})`);

  const compressionCode = tagNumbers(directory, 'Compression')?.[0] ?? 1;
  const compression = COMPRESSION_NAMES[compressionCode];
  if (!compression) {
    const name = OTHER_COMPRESSION_NAMES[compressionCode] ?? `code ${compressionCode}`;
    throw new RasterError('unsupported_compression', `unsupported compression ${name} (TIFF code ${compressionCode}); supported: none, deflate, LZW, PackBits`);
  }
  const bits = image.getBitsPerSample(0);
  const sampleFormat = formatOf(image.getSampleFormat(0), bits);
  if (!sampleFormat) throw new RasterError('unsupported_layout', `unsupported sample type (SampleFormat ${image.getSampleFormat(0)}, ${bits} bits); supported: Int8/UInt8/Int16/UInt16/Int32/UInt32/Float32/Float64`);

  const geoTransformAndType = readGeoTransform(image, directory);
  const crsInfo = readCrs(image);
  const transform = transformForCrs(crsInfo);

  const { noData, scale, offset } = await readSampleConversion(image, directory);

  const tiled = image.isTiled;
  const nativeBlock = { widthPx: image.getTileWidth(), heightPx: image.getTileHeight() };

  const { overviews, overviewImages } = await readOverviews(tiff, imageCount, widthPx);

  const blockLayout = chooseBlockLayout(widthPx, heightPx, tiled, nativeBlock);
  const gt = geoTransformAndType.geoTransform;
  const bounds: Bounds = {
    minX: gt[0],
    maxX: gt[0] + widthPx * gt[1],
    maxY: gt[3],
    minY: gt[3] + heightPx * gt[5],
  };
  const boundsLonLat = lonLatBoundsOf(bounds, transform);
  const resolutionM = resolutionInMetres(crsInfo, gt, boundsLonLat);

  const fillRaw = noData !== null ? noData : 0;
  const readRaw = async (img: GeoTIFFImage, x0: number, y0: number, w: number, h: number): Promise<TypedArray> => {
    const result = await img.readRasters({ window: [x0, y0, x0 + w, y0 + h], samples: [0], interleave: true, fillValue: fillRaw });
    return result as unknown as TypedArray;
  };

  const conversion: SampleConversion = { sampleFormat, noData, scale, offset };
  const toFloat = (raw: TypedArray): Float32Array => samplesToFloat(raw, conversion);

  // Fast path (every layout our writer and GDAL's defaults produce: one sample per pixel, whole bytes,
  // little-endian or bytes): decode each tile/strip the window touches once (geotiff's own decoders, with
  // node's zlib for deflate), then convert it row by row straight into the Float32 window. geotiff's
  // readRasters reads every pixel through a DataView call and copies it into an intermediate typed array
  // that toFloat converts again; this path does one typed-array pass and gives the same values.
  const bytesPerSample = bits / 8;
  const fastPath = image.getSamplesPerPixel() === 1 && (image.littleEndian || bytesPerSample === 1);
  const decoders = new Map<GeoTIFFImage, Promise<Decoder>>();
  const decoderFor = (img: GeoTIFFImage): Promise<Decoder> => {
    let decoder = decoders.get(img);
    if (!decoder) {
      decoder = makeDecoder(img);
      decoders.set(img, decoder);
    }
    return decoder;
  };
  // Decoded tiles by image and tile, most recently used last (OpenRasterOptions.decodedTileCache).
  const decoded = new Map<string, Promise<ArrayBuffer>>();
  const cachedTile = (img: GeoTIFFImage, decoder: Decoder) => (tx: number, ty: number): Promise<ArrayBuffer> => {
    const key = `${img === image ? 0 : overviewImages.indexOf(img) + 1}:${tx}:${ty}`;
    let data = decoded.get(key);
    if (data) decoded.delete(key);
    else {
      data = img.getTileOrStrip(tx, ty, 0, decoder as never).then((tile) => tile.data as ArrayBuffer);
      data.catch(() => decoded.delete(key));
    }
    decoded.set(key, data);
    if (decoded.size > decodedTileCache) decoded.delete(decoded.keys().next().value as string);
    return data;
  };
  const readFast = async (img: GeoTIFFImage, x0: number, y0: number, w: number, h: number): Promise<Float32Array> => {
    const decoder = await decoderFor(img);
    return readBlocksIntoWindow(img, decoder, { x0, y0, w, h }, conversion, bytesPerSample, path === null ? null : { path, fileBytes }, decodedTileCache > 0 ? cachedTile(img, decoder) : undefined);
  };

  const blockCellsTouched = (x0: number, y0: number, w: number, h: number, level = 0): number => {
    const img = level === 0 ? image : overviewImages[level - 1];
    if (!img) return Number.POSITIVE_INFINITY;
    const tileW = img.getTileWidth();
    const tileH = img.getTileHeight();
    const across = Math.floor((x0 + w - 1) / tileW) - Math.floor(x0 / tileW) + 1;
    const down = Math.floor((y0 + h - 1) / tileH) - Math.floor(y0 / tileH) + 1;
    return across * down * tileW * tileH;
  };

  const readWindow = async (x0: number, y0: number, w: number, h: number, level = 0): Promise<Float32Array> => {
    const img = level === 0 ? image : overviewImages[level - 1];
    if (!img) throw new RangeError(`readWindow: no overview level ${level} (raster has ${overviewImages.length})`);
    const levelW = img.getWidth();
    const levelH = img.getHeight();
    if (!(Number.isInteger(x0) && Number.isInteger(y0) && Number.isInteger(w) && Number.isInteger(h)) || w < 1 || h < 1 || x0 < 0 || y0 < 0 || x0 + w > levelW || y0 + h > levelH) {
      throw new RangeError(`readWindow: window ${x0},${y0} ${w}×${h} outside the ${levelW}×${levelH} image`);
    }
    if (fastPath) {
      try {
        return await readFast(img, x0, y0, w, h);
      } catch (error) {
        if (error instanceof RasterError) throw error;
        const message = error instanceof Error ? error.message : String(error);
        throw new RasterError('corrupt', `cannot decode pixels ${x0},${y0} ${w}×${h}: ${message.split('\n')[0]}`);
      }
    }
    let raw: TypedArray;
    try {
      raw = await readRaw(img, x0, y0, w, h);
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      throw new RasterError('corrupt', `cannot decode pixels ${x0},${y0} ${w}×${h}: ${message.split('\n')[0]}`);
    }
    if (raw.length !== w * h) throw new RasterError('corrupt', `decoded ${raw.length} samples for a ${w}×${h} window`);
    return toFloat(raw);
  };

  const readBlock = async (bx: number, by: number) => {
    const x0 = bx * blockLayout.blockWidthPx;
    const y0 = by * blockLayout.blockHeightPx;
    const w = Math.min(blockLayout.blockWidthPx, widthPx - x0);
    const h = Math.min(blockLayout.blockHeightPx, heightPx - y0);
    return { data: await readWindow(x0, y0, w, h), widthPx: w, heightPx: h };
  };

  const lonLatToPixel = (lon: number, lat: number) => {
    const [x, y] = transform.forward(lon, lat);
    return { x: (x - gt[0]) / gt[1], y: (y - gt[3]) / gt[5] };
  };
  const pixelToLonLat = (px: number, py: number) => {
    const [lon, lat] = transform.inverse(gt[0] + px * gt[1], gt[3] + py * gt[5]);
    return { lon, lat };
  };

  const verifyBlockExtents = (): Promise<void> => verifyImageBlockExtents([image, ...overviewImages], fileBytes);

  return {
    fileBytes,
    verifyBlockExtents,
    widthPx,
    heightPx,
    geoTransform: gt,
    crs: { epsg: crsInfo.epsg, proj4: crsInfo.proj4, kind: crsInfo.kind, name: crsInfo.name },
    noData,
    scale,
    offset,
    rasterType: geoTransformAndType.rasterType,
    bounds,
    boundsLonLat,
    resolutionM,
    sampleFormat,
    compression,
    tiled,
    nativeBlock,
    overviews,
    blockLayout,
    readWindow,
    readBlock,
    blockCellsTouched,
    lonLatToPixel,
    pixelToLonLat,
    transform,
    close: () => {
      decoded.clear();
      return closeQuietly(tiff);
    },
  };
}

type Decoder = Awaited<ReturnType<typeof getDecoder>>;

/** The decoder of one image, with the parameters geotiff's registry would give it (predictor included). */
async function makeDecoder(img: GeoTIFFImage): Promise<Decoder> {
  const dir = img.getFileDirectory();
  const tiled = img.isTiled;
  const compression = Number(dir.getValue('Compression' as never) ?? 1);
  const parameters = {
    tileWidth: Number(await dir.loadValue((tiled ? 'TileWidth' : 'ImageWidth') as never)),
    tileHeight: Number(tiled ? await dir.loadValue('TileLength' as never) : (await dir.loadValue('RowsPerStrip' as never)) || (await dir.loadValue('ImageLength' as never))),
    planarConfiguration: Number((await dir.loadValue('PlanarConfiguration' as never)) ?? 1),
    bitsPerSample: (await dir.loadValue('BitsPerSample' as never)) as number[],
    predictor: Number((await dir.loadValue('Predictor' as never)) || 1),
  };
  // Our own bounded decoders (tiff-decoders.ts): no block decodes to more than its declared size.
  if (compression === 8 || compression === 32946) return new BoundedInflateDecoder(parameters) as Decoder;
  if (compression === 5) return new BoundedLzwDecoder(parameters) as Decoder;
  if (compression === 32773) return new BoundedPackBitsDecoder(parameters) as Decoder;
  return getDecoder(compression, parameters);
}

/**
 * A typed view of `count` samples (little-endian, as the fast path requires) starting `byteOffset`
 * bytes into `buffer`; a block at an offset that is not a multiple of the sample size (TIFF does not
 * require alignment) is copied out first.
 */
function typedView(format: SampleFormat, buffer: ArrayBuffer, byteOffset: number, count: number): TypedArray {
  const bytes = { uint8: 1, int8: 1, uint16: 2, int16: 2, uint32: 4, int32: 4, float32: 4, float64: 8 }[format];
  if (buffer.byteLength - byteOffset < count * bytes) throw new RasterError('corrupt', `a tile/strip decoded to ${buffer.byteLength - byteOffset} bytes, ${count * bytes} expected`);
  if (byteOffset % bytes !== 0) {
    buffer = buffer.slice(byteOffset, byteOffset + count * bytes);
    byteOffset = 0;
  }
  switch (format) {
    case 'uint8': return new Uint8Array(buffer, byteOffset, count);
    case 'int8': return new Int8Array(buffer, byteOffset, count);
    case 'uint16': return new Uint16Array(buffer, byteOffset, count);
    case 'int16': return new Int16Array(buffer, byteOffset, count);
    case 'uint32': return new Uint32Array(buffer, byteOffset, count);
    case 'int32': return new Int32Array(buffer, byteOffset, count);
    case 'float32': return new Float32Array(buffer, byteOffset, count);
    case 'float64': return new Float64Array(buffer, byteOffset, count);
  }
}

function readGeoTransform(image: GeoTIFFImage, directory: Directory): { geoTransform: GeoTransform; rasterType: 'area' | 'point' } {
  const keys = image.getGeoKeys() ?? {};
  const rasterTypeCode = Number((keys as Record<string, unknown>).GTRasterTypeGeoKey ?? 1);
  const rasterType: 'area' | 'point' = rasterTypeCode === 2 ? 'point' : 'area';
  const scale = tagNumbers(directory, 'ModelPixelScale');
  const tiepoint = tagNumbers(directory, 'ModelTiepoint');
  const matrix = tagNumbers(directory, 'ModelTransformation');
  let gt: GeoTransform;
  if (scale && tiepoint && tiepoint.length >= 6) {
    const [i, j, , x, y] = tiepoint;
    const [sx, sy] = scale;
    if (!(sx > 0) || !(sy > 0)) throw new RasterError('no_georeferencing', `ModelPixelScale ${sx}, ${sy} is not positive`);
    gt = [x - i * sx, sx, 0, y + j * sy, 0, -sy];
  } else if (matrix && matrix.length >= 8) {
    const [a, b, , d, e, f, , h] = matrix;
    if (b !== 0 || e !== 0) throw new RasterError('unsupported_layout', 'rotated or sheared rasters (ModelTransformation with rotation terms) are not supported');
    if (!(a > 0) || !(f < 0)) throw new RasterError('unsupported_layout', 'only north-up rasters are supported (ModelTransformation needs a positive x scale and a negative y scale)');
    gt = [d, a, 0, h, 0, f];
  } else {
    throw new RasterError('no_georeferencing', 'the TIFF has no georeferencing (no ModelPixelScale + ModelTiepoint or ModelTransformation tags)');
  }
  if (!gt.every(Number.isFinite)) throw new RasterError('no_georeferencing', 'georeferencing tags hold non-finite numbers');
  if (rasterType === 'point') {
    // Pixel-is-point: the model coordinates name pixel centres; shift to the corner convention as GDAL does.
    gt = [gt[0] - gt[1] / 2, gt[1], 0, gt[3] - gt[5] / 2, 0, gt[5]];
  }
  return { geoTransform: gt, rasterType };
}

function readCrs(image: GeoTIFFImage): CrsInfo {
  const keys = (image.getGeoKeys() ?? {}) as Record<string, unknown>;
  const model = Number(keys.GTModelTypeGeoKey ?? 0);
  const projected = Number(keys.ProjectedCSTypeGeoKey ?? 0);
  const geographic = Number(keys.GeographicTypeGeoKey ?? 0);
  if (model === 1 || (model === 0 && projected > 0)) {
    if (projected === 32767 || projected === 0) {
      throw new RasterError('unsupported_crs', 'user-defined projected CRS (no EPSG code in ProjectedCSTypeGeoKey); re-save the raster with an EPSG code');
    }
    return crsForEpsg(projected);
  }
  if (model === 2 || (model === 0 && geographic > 0)) {
    if (geographic === 32767 || geographic === 0) {
      throw new RasterError('unsupported_crs', 'user-defined geographic CRS (no EPSG code in GeographicTypeGeoKey); re-save the raster with an EPSG code');
    }
    return crsForEpsg(geographic);
  }
  if (model === 3) throw new RasterError('unsupported_crs', 'geocentric model type (GTModelTypeGeoKey 3) is not supported');
  throw new RasterError('no_georeferencing', 'the TIFF has no coordinate reference system (GeoKeyDirectory missing or without a model type)');
}

function chooseBlockLayout(widthPx: number, heightPx: number, tiled: boolean, native: { widthPx: number; heightPx: number }): BlockLayout {
  let blockWidthPx: number;
  let blockHeightPx: number;
  if (tiled && native.widthPx * native.heightPx * 4 <= MAX_CACHE_BLOCK_BYTES) {
    // Tiled: cache blocks are the file's own tiles, so one block read decodes exactly one tile.
    blockWidthPx = native.widthPx;
    blockHeightPx = native.heightPx;
  } else if (!tiled && native.heightPx * widthPx * 4 <= MAX_CACHE_BLOCK_BYTES) {
    // Stripped: full-width blocks of whole strips, about 1 MiB each.
    blockWidthPx = widthPx;
    const strips = Math.max(1, Math.floor((1024 * 1024) / (native.heightPx * widthPx * 4)));
    blockHeightPx = Math.min(heightPx, strips * native.heightPx);
  } else {
    // Huge tiles or strips: square 512-pixel windows (each read decodes the blocks it needs again).
    blockWidthPx = Math.min(widthPx, 512);
    blockHeightPx = Math.min(heightPx, 512);
  }
  return { blockWidthPx, blockHeightPx, blocksAcross: Math.ceil(widthPx / blockWidthPx), blocksDown: Math.ceil(heightPx / blockHeightPx) };
}

function lonLatBoundsOf(bounds: Bounds, transform: CrsTransform): LonLatBounds {
  if (transform.identity) return { west: bounds.minX, south: bounds.minY, east: bounds.maxX, north: bounds.maxY };
  let west = Infinity;
  let south = Infinity;
  let east = -Infinity;
  let north = -Infinity;
  const steps = 16;
  for (let k = 0; k <= steps; k++) {
    const t = k / steps;
    const edgePoints: [number, number][] = [
      [bounds.minX + t * (bounds.maxX - bounds.minX), bounds.minY],
      [bounds.minX + t * (bounds.maxX - bounds.minX), bounds.maxY],
      [bounds.minX, bounds.minY + t * (bounds.maxY - bounds.minY)],
      [bounds.maxX, bounds.minY + t * (bounds.maxY - bounds.minY)],
    ];
    for (const [x, y] of edgePoints) {
      const [lon, lat] = transform.inverse(x, y);
      if (!Number.isFinite(lon) || !Number.isFinite(lat)) continue;
      west = Math.min(west, lon);
      east = Math.max(east, lon);
      south = Math.min(south, lat);
      north = Math.max(north, lat);
    }
  }
  return { west, south, east, north };
}

// Metres per degree of latitude and longitude on the WGS 84 ellipsoid at a latitude (meridional and
// prime-vertical radii of curvature).
function metresPerDegree(latDeg: number): { lat: number; lon: number } {
  const a = 6378137;
  const e2 = 0.00669437999014;
  const phi = (latDeg * Math.PI) / 180;
  const s = Math.sin(phi);
  const w = Math.sqrt(1 - e2 * s * s);
  const meridional = (a * (1 - e2)) / (w * w * w);
  const primeVertical = a / w;
  return { lat: (meridional * Math.PI) / 180, lon: (primeVertical * Math.cos(phi) * Math.PI) / 180 };
}

function resolutionInMetres(crs: CrsInfo, gt: GeoTransform, lonLat: LonLatBounds): { x: number; y: number } {
  if (crs.kind === 'projected') return { x: Math.abs(gt[1]), y: Math.abs(gt[5]) };
  const perDegree = metresPerDegree((lonLat.south + lonLat.north) / 2);
  return { x: Math.abs(gt[1]) * perDegree.lon, y: Math.abs(gt[5]) * perDegree.lat };
}

export { metresPerDegree };
