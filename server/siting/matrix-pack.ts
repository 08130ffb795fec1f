// The siting matrix in compact form for storage: the "meets" booleans as packed
// bits (row-major, node rows × candidate columns, bit 7 of byte 0 first) and the
// margins as whole centi-decibels in little-endian Int32 (the matrix keeps
// margins rounded to 0.01 dB, so value·100 is a whole number and comes back
// exactly; null = pair skipped, stored as INT32_MIN). At 2,000 × 200 that is
// 50 kB + 1.6 MB instead of 3–4 MB of JSON, and it decodes without a parser.

/** Stands for a null margin (pair skipped or node unusable). */
const NULL_MARGIN = -2147483648;

export interface PackedMatrix {
  rows: number;
  columns: number;
  meetsBits: Uint8Array;
  marginCdB: Uint8Array;
}

/** Packs rows × columns of booleans and margins (dB, 0.01 dB steps or null). */
export function packMatrix(meets: readonly (readonly boolean[])[], marginDb: readonly (readonly (number | null)[])[], columns: number): PackedMatrix {
  const rows = meets.length;
  if (marginDb.length !== rows) throw new RangeError(`packMatrix: ${rows} rows of meets but ${marginDb.length} of margins`);
  const cells = rows * columns;
  const meetsBits = new Uint8Array(Math.ceil(cells / 8));
  const margins = new DataView(new ArrayBuffer(cells * 4));
  for (let i = 0; i < rows; i++) {
    const meetRow = meets[i];
    const marginRow = marginDb[i];
    if (meetRow.length !== columns || marginRow.length !== columns) throw new RangeError(`packMatrix: row ${i} has ${meetRow.length}/${marginRow.length} columns, expected ${columns}`);
    for (let j = 0; j < columns; j++) {
      const cell = i * columns + j;
      if (meetRow[j]) meetsBits[cell >> 3] |= 0x80 >> (cell & 7);
      const margin = marginRow[j];
      let stored = NULL_MARGIN;
      if (margin !== null) {
        stored = Math.round(margin * 100);
        if (!Number.isFinite(margin) || stored <= NULL_MARGIN || stored > 2147483647) throw new RangeError(`packMatrix: margin ${margin} dB at row ${i}, column ${j} cannot be stored`);
      }
      margins.setInt32(cell * 4, stored, true);
    }
  }
  return { rows, columns, meetsBits, marginCdB: new Uint8Array(margins.buffer) };
}

/** The inverse of packMatrix: the same booleans and margins (margins as value/100, i.e. the rounded dB). */
export function unpackMatrix(packed: PackedMatrix): { meets: boolean[][]; marginDb: Array<Array<number | null>> } {
  const { rows, columns, meetsBits, marginCdB } = packed;
  const cells = rows * columns;
  if (meetsBits.length < Math.ceil(cells / 8) || marginCdB.length < cells * 4) throw new RangeError(`unpackMatrix: stored matrix is shorter than ${rows} × ${columns}`);
  const margins = new DataView(marginCdB.buffer, marginCdB.byteOffset, marginCdB.byteLength);
  const meets: boolean[][] = [];
  const marginDb: Array<Array<number | null>> = [];
  for (let i = 0; i < rows; i++) {
    const meetRow = new Array<boolean>(columns);
    const marginRow = new Array<number | null>(columns);
    for (let j = 0; j < columns; j++) {
      const cell = i * columns + j;
      meetRow[j] = (meetsBits[cell >> 3] & (0x80 >> (cell & 7))) !== 0;
      const stored = margins.getInt32(cell * 4, true);
      marginRow[j] = stored === NULL_MARGIN ? null : stored / 100;
    }
    meets.push(meetRow);
    marginDb.push(marginRow);
  }
  return { meets, marginDb };
}
