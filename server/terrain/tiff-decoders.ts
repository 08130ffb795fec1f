// Block decoders with a hard output bound: a tile or strip never decodes to more than the
// bytes its size declares (plus a little slack), so a small compressed block cannot expand into
// gigabytes (a "decompression bomb"). geotiff's own LZW and PackBits decoders grow a JavaScript
// array without limit; deflate goes through node's zlib with maxOutputLength.
// node:zlib is fetched when a block is inflated (process.getBuiltinModule): loading it costs a short
// command (an uncompressed DEM's los run) ~5 ms of start-up.
import { BaseDecoder } from 'geotiff';

type Parameters = ConstructorParameters<typeof BaseDecoder>[0];

/** Decoded bytes a block of these parameters holds (chunky: all samples of a pixel; planar: one). */
export function expectedBlockBytes(parameters: Parameters): number {
  const bits = Array.isArray(parameters.bitsPerSample) || ArrayBuffer.isView(parameters.bitsPerSample) ? Array.from(parameters.bitsPerSample as ArrayLike<number>) : [Number(parameters.bitsPerSample)];
  const bitsPerPixel = parameters.planarConfiguration === 2 ? bits[0] : bits.reduce((a, b) => a + b, 0);
  return Math.ceil((parameters.tileWidth * bitsPerPixel) / 8) * parameters.tileHeight;
}

abstract class BoundedDecoder extends BaseDecoder {
  protected readonly limit: number;
  constructor(parameters: Parameters) {
    super(parameters);
    this.limit = expectedBlockBytes(parameters) + 16;
  }
}

function exactBuffer(bytes: Uint8Array): ArrayBuffer {
  return bytes.byteOffset === 0 && bytes.byteLength === bytes.buffer.byteLength ? (bytes.buffer as ArrayBuffer) : (bytes.slice().buffer as ArrayBuffer);
}

/** Deflate (TIFF compression 8 / 32946) through node's zlib, refusing more output than the block holds. */
export class BoundedInflateDecoder extends BoundedDecoder {
  override decodeBlock(buffer: ArrayBufferLike): ArrayBufferLike {
    try {
      return exactBuffer(process.getBuiltinModule('node:zlib').inflateSync(new Uint8Array(buffer), { maxOutputLength: this.limit }));
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ERR_BUFFER_TOO_LARGE') throw new Error(`a deflate block expands beyond its declared ${this.limit - 16} bytes`);
      throw error;
    }
  }
}

/**
 * LZW as TIFF 6.0 §13 defines it: 9–12-bit codes, most significant bit first, Clear (256) and
 * EndOfInformation (257), the code width growing one code early (at 511, 1023, 2047). Output is
 * written into a buffer of the block's size; more output is an error.
 */
export class BoundedLzwDecoder extends BoundedDecoder {
  override decodeBlock(buffer: ArrayBufferLike): ArrayBufferLike {
    const input = new Uint8Array(buffer);
    const out = new Uint8Array(this.limit);
    const prefix = new Int16Array(4096);
    const suffix = new Uint8Array(4096);
    const lengths = new Uint16Array(4096);
    for (let i = 0; i < 256; i++) {
      prefix[i] = -1;
      suffix[i] = i;
      lengths[i] = 1;
    }
    let next = 258;
    let width = 9;
    let bitPos = 0;
    const totalBits = input.length * 8;
    let written = 0;
    let previous = -1;
    const readCode = (): number => {
      if (bitPos + width > totalBits) return 257; // ran out of input: treat as end of information
      let code = 0;
      for (let k = 0; k < width; k++) {
        const bit = (input[(bitPos + k) >> 3] >> (7 - ((bitPos + k) & 7))) & 1;
        code = (code << 1) | bit;
      }
      bitPos += width;
      return code;
    };
    const emit = (code: number): number => {
      // Writes the string of `code` (walking its prefix chain backwards); returns its first byte.
      const length = lengths[code];
      if (written + length > out.length) throw new Error(`an LZW block expands beyond its declared ${this.limit - 16} bytes`);
      let at = written + length - 1;
      let c = code;
      while (c >= 0 && at >= written) {
        out[at--] = suffix[c];
        c = prefix[c];
      }
      written += length;
      return out[written - length];
    };
    for (;;) {
      const code = readCode();
      if (code === 257) break;
      if (code === 256) {
        next = 258;
        width = 9;
        previous = -1;
        continue;
      }
      if (previous === -1) {
        if (code > 255) throw new Error(`LZW: code ${code} after a Clear`);
        emit(code);
        previous = code;
        continue;
      }
      let first: number;
      if (code < next) {
        first = emit(code);
      } else if (code === next) {
        // The KwKwK case: the new string is the previous one plus its own first byte.
        const start = written;
        const firstOfPrevious = emit(previous);
        if (written + 1 > out.length) throw new Error(`an LZW block expands beyond its declared ${this.limit - 16} bytes`);
        out[written++] = firstOfPrevious;
        first = out[start];
      } else {
        throw new Error(`LZW: code ${code} is not in the table (${next} entries)`);
      }
      if (next < 4096) {
        prefix[next] = previous;
        suffix[next] = first;
        lengths[next] = lengths[previous] + 1;
        next++;
      }
      if (next + 1 >= 1 << width && width < 12) width++;
      previous = code;
    }
    return out.slice(0, written).buffer;
  }
}

/** PackBits (TIFF 6.0 §9) into a buffer of the block's size; more output is an error. */
export class BoundedPackBitsDecoder extends BoundedDecoder {
  override decodeBlock(buffer: ArrayBufferLike): ArrayBufferLike {
    const input = new Uint8Array(buffer);
    const out = new Uint8Array(this.limit);
    let written = 0;
    let i = 0;
    const overflow = () => new Error(`a PackBits block expands beyond its declared ${this.limit - 16} bytes`);
    while (i < input.length) {
      const header = (input[i++] << 24) >> 24; // signed byte
      if (header >= 0) {
        const n = header + 1;
        if (written + n > out.length) throw overflow();
        out.set(input.subarray(i, i + n), written);
        written += Math.min(n, input.length - i);
        i += n;
      } else if (header !== -128) {
        const n = 1 - header;
        if (written + n > out.length) throw overflow();
        out.fill(input[i++] ?? 0, written, written + n);
        written += n;
      }
    }
    return out.slice(0, written).buffer;
  }
}
