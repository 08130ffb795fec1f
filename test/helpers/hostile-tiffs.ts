// A hostile GeoTIFF set of our own making (every file built here from a valid DEM our writer
// produces, then broken on purpose): IFD loops, truncations, decompression bombs, sizes and
// counts that lie, wrong and unknown compressions. Used by test/api/hostile-tiff.test.ts.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { deflateSync } from 'node:zlib';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';

export interface HostileFile {
  name: string;
  bytes: Buffer;
}

const typeSizes: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 7: 1, 11: 4, 12: 8, 16: 8 };

/** First-IFD entry of a little-endian classic TIFF: where its value(s) live. */
function entryOf(bytes: Buffer, tag: number): { entryAt: number; type: number; count: number; valueAt: number } {
  const ifd = bytes.readUInt32LE(4);
  const n = bytes.readUInt16LE(ifd);
  for (let i = 0; i < n; i++) {
    const at = ifd + 2 + i * 12;
    if (bytes.readUInt16LE(at) !== tag) continue;
    const type = bytes.readUInt16LE(at + 2);
    const count = bytes.readUInt32LE(at + 4);
    const inline = typeSizes[type] * count <= 4;
    return { entryAt: at, type, count, valueAt: inline ? at + 8 : bytes.readUInt32LE(at + 8) };
  }
  throw new Error(`tag ${tag} not in the first IFD`);
}

function setValue(bytes: Buffer, tag: number, index: number, value: number): Buffer {
  const copy = Buffer.from(bytes);
  const entry = entryOf(copy, tag);
  if (entry.type === 3) copy.writeUInt16LE(value, entry.valueAt + index * 2);
  else copy.writeUInt32LE(value, entry.valueAt + index * 4);
  return copy;
}

function setCount(bytes: Buffer, tag: number, count: number): Buffer {
  const copy = Buffer.from(bytes);
  copy.writeUInt32LE(count, entryOf(copy, tag).entryAt + 4);
  return copy;
}

/** A valid 96 × 96 Int16 DEM (UTM 32N, 30 m), tiled 32 px, in the given compression (LZW and PackBits re-saved by gdal_translate). */
export function validDem(compression: 'none' | 'deflate' | 'lzw' | 'packbits' = 'deflate', tiled = true): Buffer {
  const width = 96;
  const height = 96;
  const data = new Int16Array(width * height);
  for (let i = 0; i < data.length; i++) data[i] = 200 + (i % 97);
  const ours = Buffer.from(
    writeGeoTiff({ widthPx: width, heightPx: height, data, geoTransform: [289500, 30, 0, 5521500, 0, -30], epsg: 32632, noData: -32768, tiled: tiled ? { tileSizePx: 32 } : undefined, compression: compression === 'none' ? 'none' : 'deflate' }),
  );
  if (compression !== 'lzw' && compression !== 'packbits') return ours;
  const dir = mkdtempSync(join(tmpdir(), 'earshot-hostile-'));
  try {
    writeFileSync(join(dir, 'in.tif'), ours);
    const layout = tiled ? ['-co', 'TILED=YES', '-co', 'BLOCKXSIZE=32', '-co', 'BLOCKYSIZE=32'] : [];
    execFileSync('gdal_translate', ['-q', '-co', `COMPRESS=${compression.toUpperCase()}`, ...layout, join(dir, 'in.tif'), join(dir, 'out.tif')]);
    return readFileSync(join(dir, 'out.tif'));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** The 26-byte file of the review: one IFD with one entry whose next-IFD offset is itself. */
export function selfLoop26(): Buffer {
  const bytes = Buffer.alloc(26);
  bytes.write('II', 0, 'latin1');
  bytes.writeUInt16LE(42, 2);
  bytes.writeUInt32LE(8, 4);
  bytes.writeUInt16LE(1, 8); // one entry
  bytes.writeUInt16LE(256, 10); // ImageWidth
  bytes.writeUInt16LE(3, 12);
  bytes.writeUInt32LE(1, 14);
  bytes.writeUInt16LE(10, 18);
  bytes.writeUInt32LE(8, 22); // next IFD: this one again
  return bytes;
}

/** A valid DEM whose last IFD points back to the first (a loop of real directories). */
function loopOfRealIfds(): Buffer {
  const bytes = Buffer.from(validDem());
  let ifd = bytes.readUInt32LE(4);
  for (;;) {
    const nextAt = ifd + 2 + bytes.readUInt16LE(ifd) * 12;
    const next = bytes.readUInt32LE(nextAt);
    if (next === 0) {
      bytes.writeUInt32LE(bytes.readUInt32LE(4), nextAt);
      return bytes;
    }
    ifd = next;
  }
}

/** Tile 0 replaced by a deflate stream of `expandsTo` zero bytes (the tile holds 2 KB). */
function deflateBomb(expandsTo: number): Buffer {
  const base = validDem('deflate');
  const bomb = deflateSync(Buffer.alloc(expandsTo), { level: 9 });
  const offsets = entryOf(base, 324);
  const withBomb = Buffer.concat([base, bomb]);
  withBomb.writeUInt32LE(base.length, offsets.valueAt);
  return setValue(withBomb, 325, 0, bomb.length);
}

/** Tile 0 replaced by a PackBits run that would repeat a byte far beyond the tile. */
function packBitsBomb(): Buffer {
  const base = validDem('packbits');
  const runs = Buffer.alloc(40_000);
  for (let i = 0; i < runs.length; i += 2) runs[i] = 0x81; // -127: repeat the next byte 128 times
  const offsets = entryOf(base, 324);
  const withBomb = Buffer.concat([base, runs]);
  withBomb.writeUInt32LE(base.length, offsets.valueAt);
  return setValue(withBomb, 325, 0, runs.length);
}

export function hostileSet(): HostileFile[] {
  const dem = validDem();
  const stripped = validDem('deflate', false);
  return [
    { name: 'empty file', bytes: Buffer.alloc(0) },
    { name: 'not a TIFF (PNG signature)', bytes: Buffer.from('89504e470d0a1a0a0000000d49484452', 'hex') },
    { name: 'header only', bytes: dem.subarray(0, 8) },
    { name: '26-byte IFD pointing at itself', bytes: selfLoop26() },
    { name: 'last IFD pointing back to the first', bytes: loopOfRealIfds() },
    { name: 'first IFD offset beyond the end', bytes: (() => { const b = Buffer.from(dem); b.writeUInt32LE(0x7ffffff0, 4); return b; })() },
    { name: 'IFD claiming 65535 entries', bytes: (() => { const b = Buffer.from(dem); b.writeUInt16LE(65535, b.readUInt32LE(4)); return b; })() },
    { name: 'truncated to half', bytes: dem.subarray(0, Math.floor(dem.length / 2)) },
    { name: 'truncated to 90 %', bytes: dem.subarray(0, Math.floor(dem.length * 0.9)) },
    { name: 'deflate bomb (tile of 2 KB expanding to 64 MB)', bytes: deflateBomb(64 * 1024 * 1024) },
    { name: 'PackBits bomb (tile of 2 KB expanding to 2.5 MB)', bytes: packBitsBomb() },
    { name: 'width lies: 4 000 000 px', bytes: setValue(dem, 256, 0, 4_000_000) },
    { name: 'height lies: 1 000 000 px', bytes: setValue(dem, 257, 0, 1_000_000) },
    { name: 'tile size lies: 65535 px tiles', bytes: setValue(setValue(dem, 322, 0, 65535), 323, 0, 65535) },
    { name: 'tile offset count lies (table claims a million values)', bytes: setCount(dem, 324, 1_000_000) },
    { name: 'tile byte count lies (1 GB)', bytes: setValue(dem, 325, 0, 1_000_000_000) },
    { name: 'tile offset beyond the end', bytes: setValue(dem, 324, 1, 0x7fff0000) },
    { name: 'one strip of 20 000 × 20 000 declared', bytes: setValue(setValue(setValue(stripped, 256, 0, 20_000), 257, 0, 20_000), 278, 0, 20_000) },
    { name: 'wrong compression: JPEG (7)', bytes: setValue(dem, 259, 0, 7) },
    { name: 'unknown compression 9999', bytes: setValue(dem, 259, 0, 9999) },
    { name: 'deflate data labelled LZW', bytes: setValue(dem, 259, 0, 5) },
    { name: 'deflate data labelled uncompressed', bytes: setValue(dem, 259, 0, 1) },
    { name: 'deflate data labelled PackBits', bytes: setValue(dem, 259, 0, 32773) },
    { name: 'bits per sample lies (64 for Int16)', bytes: setValue(dem, 258, 0, 64) },
    { name: 'unknown field type in an entry', bytes: (() => { const b = Buffer.from(dem); b.writeUInt16LE(99, entryOf(b, 256).entryAt + 2); return b; })() },
  ];
}
