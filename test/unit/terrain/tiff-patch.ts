// Test helper: edits the first IFD of a little-endian classic TIFF in place (to make broken or exotic files).
export function patchTag(bytes: Uint8Array, tag: number, change: { newTag?: number; shortValue?: number }): Uint8Array {
  const copy = new Uint8Array(bytes); // a copy (Buffer.slice would share memory)
  const view = new DataView(copy.buffer);
  const ifd = view.getUint32(4, true);
  const count = view.getUint16(ifd, true);
  for (let i = 0; i < count; i++) {
    const entry = ifd + 2 + i * 12;
    if (view.getUint16(entry, true) !== tag) continue;
    if (change.newTag !== undefined) view.setUint16(entry, change.newTag, true);
    if (change.shortValue !== undefined) view.setUint16(entry + 8, change.shortValue, true);
    return copy;
  }
  throw new Error(`tag ${tag} not found`);
}

export function toArrayBuffer(bytes: Uint8Array): ArrayBuffer {
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
}
