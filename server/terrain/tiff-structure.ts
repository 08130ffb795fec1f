// A bounded walk over a TIFF's structure (TIFF 6.0 §2 "Image File Directory"; BigTIFF: the
// 8-byte-offset variant) before geotiff.js is allowed to look at it. geotiff follows the chain of
// IFDs without noticing a loop (a 26-byte file whose IFD points at itself made it spin forever)
// and trusts every count and offset. Here every IFD offset is visited once, the number of IFDs,
// entries and value bytes is bounded, every value lies inside the file, and each image's blocks
// have a bounded decoded size, so a request costs bounded time and memory whatever the file says.
// Reads only the header and the directories (a few KB for a real DEM), never pixel data.
import { open } from 'node:fs/promises';
import { RasterError } from './raster-error.ts';

/** More IFDs than any real file carries (full-resolution image, overviews, masks). */
export const maxIfds = 64;
/** More entries than any real IFD carries (GDAL writes about 20). */
export const maxEntriesPerIfd = 512;
/** Largest decoded tile or strip we accept: bigger ones make every read decode the whole block. */
export const maxBlockBytes = 64 * 1024 * 1024;
/** Most tiles or strips one image may list (a 40 000² raster in 256-px tiles needs 24 415). */
export const maxBlocksPerImage = 4_000_000;

const typeSizes: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4, 16: 8, 17: 8, 18: 8 };

export interface TiffImageStructure {
  widthPx: number;
  heightPx: number;
  tiled: boolean;
  blockWidthPx: number;
  blockHeightPx: number;
  blockCount: number;
  /** Decoded bytes of one block (all samples of a pixel, or one sample plane). */
  blockBytes: number;
  compression: number;
}

export interface TiffStructure {
  bigTiff: boolean;
  littleEndian: boolean;
  images: TiffImageStructure[];
}

interface Reader {
  size: number;
  read(offset: number, length: number): Promise<Buffer>;
  close(): Promise<void>;
}

async function fileReader(path: string): Promise<Reader> {
  const handle = await open(path, 'r');
  const size = (await handle.stat()).size;
  return {
    size,
    async read(offset, length) {
      const buffer = Buffer.alloc(length);
      const { bytesRead } = await handle.read(buffer, 0, length, offset);
      return buffer.subarray(0, bytesRead);
    },
    close: () => handle.close(),
  };
}

function bufferReader(bytes: ArrayBuffer): Reader {
  const all = Buffer.from(bytes);
  return { size: all.length, read: async (offset, length) => all.subarray(offset, offset + length), close: async () => undefined };
}

const corrupt = (message: string) => new RasterError('corrupt', message);

/** Walks the structure of the TIFF at `source`; throws RasterError ('not_tiff', 'corrupt', 'unsupported_layout') on anything out of bounds. */
export async function inspectTiff(source: string | ArrayBuffer): Promise<TiffStructure> {
  const reader = typeof source === 'string' ? await fileReader(source) : bufferReader(source);
  try {
    return await walk(reader);
  } finally {
    await reader.close();
  }
}

async function walk(reader: Reader): Promise<TiffStructure> {
  const head = await reader.read(0, 16);
  if (head.length < 8) throw new RasterError('not_tiff', `not a TIFF file (only ${head.length} bytes)`);
  const order = head.toString('latin1', 0, 2);
  if (order !== 'II' && order !== 'MM') throw new RasterError('not_tiff', 'not a TIFF file (it must start with II or MM)');
  const le = order === 'II';
  const u16 = (b: Buffer, at: number) => (le ? b.readUInt16LE(at) : b.readUInt16BE(at));
  const u32 = (b: Buffer, at: number) => (le ? b.readUInt32LE(at) : b.readUInt32BE(at));
  const u64 = (b: Buffer, at: number) => {
    const value = le ? b.readBigUInt64LE(at) : b.readBigUInt64BE(at);
    if (value > BigInt(Number.MAX_SAFE_INTEGER)) throw corrupt('an offset beyond any file size');
    return Number(value);
  };
  const magic = u16(head, 2);
  let bigTiff: boolean;
  let firstIfd: number;
  if (magic === 42) {
    bigTiff = false;
    firstIfd = u32(head, 4);
  } else if (magic === 43) {
    if (head.length < 16 || u16(head, 4) !== 8 || u16(head, 6) !== 0) throw corrupt('BigTIFF header with an unexpected offset size');
    bigTiff = true;
    firstIfd = u64(head, 8);
  } else {
    throw new RasterError('not_tiff', `not a TIFF file (version ${magic}; 42 or 43 expected)`);
  }
  const countBytes = bigTiff ? 8 : 2;
  const entryBytes = bigTiff ? 20 : 12;
  const inlineBytes = bigTiff ? 8 : 4;

  const seen = new Set<number>();
  const images: TiffImageStructure[] = [];
  let next = firstIfd;
  while (next !== 0) {
    if (seen.has(next)) throw corrupt(`the IFD chain loops (IFD at byte ${next} is listed twice)`);
    if (seen.size >= maxIfds) throw corrupt(`more than ${maxIfds} image directories`);
    seen.add(next);
    if (next < 8 || next % 2 === 1 || next + countBytes > reader.size) throw corrupt(`an IFD offset (${next}) points outside the file (${reader.size} bytes) or to an odd byte`);
    const countBuffer = await reader.read(next, countBytes);
    const entries = bigTiff ? u64(countBuffer, 0) : u16(countBuffer, 0);
    if (entries === 0 || entries > maxEntriesPerIfd) throw corrupt(`an IFD has ${entries} entries (1–${maxEntriesPerIfd} expected)`);
    const tableBytes = entries * entryBytes + inlineBytes;
    if (next + countBytes + tableBytes > reader.size) throw corrupt(`the IFD at byte ${next} runs past the end of the file`);
    const table = await reader.read(next + countBytes, tableBytes);
    const tags = new Map<number, { type: number; count: number; valueAt: number; inline: boolean }>();
    for (let i = 0; i < entries; i++) {
      const at = i * entryBytes;
      const tag = u16(table, at);
      const type = u16(table, at + 2);
      const count = bigTiff ? u64(table, at + 4) : u32(table, at + 4);
      const size = typeSizes[type];
      if (size === undefined) throw corrupt(`tag ${tag} has an unknown field type ${type}`);
      const bytes = size * count;
      const inline = bytes <= inlineBytes;
      const valueAt = inline ? next + countBytes + at + (bigTiff ? 12 : 8) : bigTiff ? u64(table, at + 12) : u32(table, at + 8);
      if (!inline && (valueAt + bytes > reader.size || !Number.isSafeInteger(valueAt + bytes))) {
        throw corrupt(`tag ${tag} claims ${count} values at byte ${valueAt}, beyond the end of the file (${reader.size} bytes)`);
      }
      tags.set(tag, { type, count, valueAt, inline });
    }
    next = bigTiff ? u64(table, entries * entryBytes) : u32(table, entries * entryBytes);

    // The few scalar values this check needs (first value of each tag).
    const scalar = async (tag: number, fallback?: number): Promise<number> => {
      const entry = tags.get(tag);
      if (!entry) {
        if (fallback === undefined) throw corrupt(`an image lacks required tag ${tag}`);
        return fallback;
      }
      if (entry.count < 1) throw corrupt(`tag ${tag} has no value`);
      const size = typeSizes[entry.type];
      const raw = await reader.read(entry.valueAt, size);
      if (raw.length < size) throw corrupt(`tag ${tag} is cut off`);
      switch (entry.type) {
        case 1:
        case 7:
          return raw[0];
        case 3:
          return u16(raw, 0);
        case 4:
        case 13:
          return u32(raw, 0);
        case 16:
        case 18:
          return u64(raw, 0);
        default:
          throw corrupt(`tag ${tag} has field type ${entry.type}, an unsigned integer expected`);
      }
    };
    const sum = async (tag: number, count: number, fallback: number): Promise<number> => {
      const entry = tags.get(tag);
      if (!entry) return fallback * count;
      const n = Math.min(entry.count, count, 16);
      const size = typeSizes[entry.type];
      const raw = await reader.read(entry.valueAt, n * size);
      let total = 0;
      for (let i = 0; i < n; i++) total += entry.type === 3 ? u16(raw, i * 2) : entry.type === 4 ? u32(raw, i * 4) : raw[i];
      return total + (count - n) * (n > 0 ? total / n : fallback);
    };

    const widthPx = await scalar(256);
    const heightPx = await scalar(257);
    if (widthPx < 1 || heightPx < 1 || widthPx > 10_000_000 || heightPx > 10_000_000) throw corrupt(`an image claims ${widthPx} × ${heightPx} pixels`);
    const samples = await scalar(277, 1);
    if (samples < 1 || samples > 64) throw corrupt(`an image claims ${samples} samples per pixel`);
    const planar = await scalar(284, 1);
    const compression = await scalar(259, 1);
    const bitsPerPixel = await sum(258, planar === 2 ? 1 : samples, 1);
    if (!(bitsPerPixel >= 1 && bitsPerPixel <= 64 * 64)) throw corrupt(`an image claims ${bitsPerPixel} bits per pixel`);
    const tiled = tags.has(322) || tags.has(324);
    let blockWidthPx: number;
    let blockHeightPx: number;
    let blockCount: number;
    let offsetsTag: number;
    let countsTag: number;
    if (tiled) {
      blockWidthPx = await scalar(322);
      blockHeightPx = await scalar(323);
      if (blockWidthPx < 1 || blockHeightPx < 1) throw corrupt(`tiles of ${blockWidthPx} × ${blockHeightPx} pixels`);
      blockCount = Math.ceil(widthPx / blockWidthPx) * Math.ceil(heightPx / blockHeightPx);
      offsetsTag = 324;
      countsTag = 325;
    } else {
      blockWidthPx = widthPx;
      blockHeightPx = Math.min(heightPx, Math.max(1, await scalar(278, heightPx)));
      blockCount = Math.ceil(heightPx / blockHeightPx);
      offsetsTag = 273;
      countsTag = 279;
    }
    if (planar === 2) blockCount *= samples;
    if (blockCount > maxBlocksPerImage) throw corrupt(`an image lists ${blockCount} ${tiled ? 'tiles' : 'strips'} (at most ${maxBlocksPerImage})`);
    const blockBytes = Math.ceil((blockWidthPx * bitsPerPixel) / 8) * blockHeightPx;
    if (blockBytes > maxBlockBytes) {
      throw new RasterError(
        'unsupported_layout',
        `each ${tiled ? 'tile' : 'strip'} decodes to ${Math.round(blockBytes / (1024 * 1024))} MB (${blockWidthPx} × ${blockHeightPx} pixels), more than ${maxBlockBytes / (1024 * 1024)} MB; re-save the raster tiled (e.g. gdal_translate -co TILED=YES)`,
      );
    }
    const offsets = tags.get(offsetsTag);
    const counts = tags.get(countsTag);
    if (!offsets || !counts) throw corrupt(`an image has no ${tiled ? 'tile' : 'strip'} offset or byte-count table`);
    if (offsets.count < blockCount || counts.count < blockCount) throw corrupt(`an image lists ${Math.min(offsets.count, counts.count)} ${tiled ? 'tiles' : 'strips'}, its size needs ${blockCount}`);
    images.push({ widthPx, heightPx, tiled, blockWidthPx, blockHeightPx, blockCount, blockBytes, compression });
  }
  if (images.length === 0) throw corrupt('the TIFF has no image directory');
  return { bigTiff, littleEndian: le, images };
}
