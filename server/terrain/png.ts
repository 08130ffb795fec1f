// A small PNG encoder (PNG specification, ISO/IEC 15948): 8-bit greyscale, grey + alpha or RGBA,
// filter type 1 (Sub) on every row, one zlib IDAT from node:zlib. Used for hillshade tiles; other
// rooms' raster tiles can use it too.
import { deflateSync } from 'node:zlib';

const CRC_TABLE = (() => {
  const table = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    table[n] = c >>> 0;
  }
  return table;
})();

/** CRC-32 as used by PNG chunks (ISO 3309 polynomial, PNG spec Annex D). */
export function crc32(bytes: Uint8Array, start = 0, end = bytes.length): number {
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = CRC_TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, data: Uint8Array): Uint8Array {
  const out = new Uint8Array(12 + data.length);
  const view = new DataView(out.buffer);
  view.setUint32(0, data.length);
  for (let i = 0; i < 4; i++) out[4 + i] = type.charCodeAt(i);
  out.set(data, 8);
  view.setUint32(8 + data.length, crc32(out, 4, 8 + data.length));
  return out;
}

export type PngColour = 'grey' | 'grey-alpha' | 'rgba';

const CHANNELS: Record<PngColour, number> = { grey: 1, 'grey-alpha': 2, rgba: 4 };
const COLOUR_TYPE: Record<PngColour, number> = { grey: 0, 'grey-alpha': 4, rgba: 6 };

/** Encodes 8-bit pixels (row-major, channels interleaved) as a PNG file. */
export function encodePng(widthPx: number, heightPx: number, pixels: Uint8Array, colour: PngColour = 'rgba'): Uint8Array {
  const channels = CHANNELS[colour];
  if (!Number.isInteger(widthPx) || !Number.isInteger(heightPx) || widthPx < 1 || heightPx < 1) throw new RangeError('encodePng: width and height must be positive integers');
  if (pixels.length !== widthPx * heightPx * channels) throw new RangeError(`encodePng: expected ${widthPx * heightPx * channels} bytes, got ${pixels.length}`);
  const stride = widthPx * channels;
  const filtered = new Uint8Array((stride + 1) * heightPx);
  for (let y = 0; y < heightPx; y++) {
    const row = y * stride;
    const out = y * (stride + 1);
    filtered[out] = 1; // Sub: each byte minus the byte one pixel to the left
    for (let i = 0; i < stride; i++) {
      const left = i >= channels ? pixels[row + i - channels] : 0;
      filtered[out + 1 + i] = (pixels[row + i] - left) & 0xff;
    }
  }
  const header = new Uint8Array(13);
  const view = new DataView(header.buffer);
  view.setUint32(0, widthPx);
  view.setUint32(4, heightPx);
  header[8] = 8; // bit depth
  header[9] = COLOUR_TYPE[colour];
  header[10] = 0; // deflate
  header[11] = 0; // adaptive filtering
  header[12] = 0; // no interlace
  const parts = [
    Uint8Array.of(0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a),
    chunk('IHDR', header),
    chunk('IDAT', deflateSync(filtered)),
    chunk('IEND', new Uint8Array(0)),
  ];
  const total = parts.reduce((n, p) => n + p.length, 0);
  const png = new Uint8Array(total);
  let at = 0;
  for (const part of parts) {
    png.set(part, at);
    at += part.length;
  }
  return png;
}
