// A small PNG encoder (PNG specification, ISO/IEC 15948): 8-bit greyscale, grey + alpha or RGBA,
// filter type 1 (Sub) on every row, one zlib IDAT from node:zlib. Used for hillshade tiles; other
// rooms' raster tiles can use it too.
import { deflateSync, inflateSync } from 'node:zlib';

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

export type PngColour = 'grey' | 'grey-alpha' | 'rgb' | 'rgba';

const CHANNELS: Record<PngColour, number> = { grey: 1, 'grey-alpha': 2, rgb: 3, rgba: 4 };
const COLOUR_TYPE: Record<PngColour, number> = { grey: 0, 'grey-alpha': 4, rgb: 2, rgba: 6 };

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

/**
 * Decodes an 8-bit, non-interlaced PNG (grey, grey + alpha, RGB or RGBA, as encodePng writes)
 * back to its pixels: the IDAT stream inflated, then each row's filter undone (PNG spec §9.2:
 * None, Sub, Up, Average, Paeth). Other PNGs (palette, 16-bit, interlaced) are refused.
 */
export function decodePng(png: Uint8Array): { widthPx: number; heightPx: number; colour: PngColour; pixels: Uint8Array } {
  const view = new DataView(png.buffer, png.byteOffset, png.byteLength);
  let at = 8;
  let widthPx = 0;
  let heightPx = 0;
  let colour: PngColour | null = null;
  const idat: Uint8Array[] = [];
  while (at + 8 <= png.length) {
    const length = view.getUint32(at);
    const type = String.fromCharCode(png[at + 4], png[at + 5], png[at + 6], png[at + 7]);
    const data = png.subarray(at + 8, at + 8 + length);
    if (type === 'IHDR') {
      widthPx = view.getUint32(at + 8);
      heightPx = view.getUint32(at + 12);
      const found = (Object.keys(COLOUR_TYPE) as PngColour[]).find((c) => COLOUR_TYPE[c] === data[9]);
      if (data[8] !== 8 || !found || data[12] !== 0) throw new RangeError('decodePng: only 8-bit, non-interlaced grey, grey-alpha, RGB or RGBA images');
      colour = found;
    } else if (type === 'IDAT') idat.push(data);
    else if (type === 'IEND') break;
    at += 12 + length;
  }
  if (!colour) throw new RangeError('decodePng: no IHDR chunk');
  const channels = CHANNELS[colour];
  const stride = widthPx * channels;
  const raw = inflateSync(Buffer.concat(idat));
  const pixels = new Uint8Array(stride * heightPx);
  for (let y = 0; y < heightPx; y++) {
    const filter = raw[y * (stride + 1)];
    const src = y * (stride + 1) + 1;
    const row = y * stride;
    for (let i = 0; i < stride; i++) {
      const a = i >= channels ? pixels[row + i - channels] : 0;
      const b = y > 0 ? pixels[row - stride + i] : 0;
      const c = y > 0 && i >= channels ? pixels[row - stride + i - channels] : 0;
      let predictor = 0;
      if (filter === 1) predictor = a;
      else if (filter === 2) predictor = b;
      else if (filter === 3) predictor = (a + b) >> 1;
      else if (filter === 4) {
        const p = a + b - c;
        const pa = Math.abs(p - a);
        const pb = Math.abs(p - b);
        const pc = Math.abs(p - c);
        predictor = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      }
      pixels[row + i] = (raw[src + i] + predictor) & 0xff;
    }
  }
  return { widthPx, heightPx, colour, pixels };
}
