// CSV as RFC 4180 describes it (§2: CRLF line ends, fields holding a comma,
// a double quote or a line break are enclosed in double quotes, a double quote
// inside is doubled), plus one defence of the trade: a text cell that a
// spreadsheet would run as a formula (first character = + - @, a tab or a
// carriage return) is prefixed with an apostrophe so it stays text
// (common practice, the "CSV injection" advice). Numbers are written as numbers.

export type CsvValue = string | number | boolean | null | undefined;

const FORMULA_START = /^[=+\-@\t\r]/;

/** One field, quoted when RFC 4180 §2 needs it, neutralised when a spreadsheet would evaluate it. */
export function csvField(value: CsvValue): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : '';
  if (typeof value === 'boolean') return value ? 'true' : 'false';
  let text = value;
  if (FORMULA_START.test(text)) text = `'${text}`;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** One record with its CRLF. */
export function csvRecord(values: readonly CsvValue[]): string {
  return `${values.map(csvField).join(',')}\r\n`;
}

/** The header record then one record per row, yielded in batches (for a streamed answer). */
export function* csvLines<T>(columns: ReadonlyArray<{ header: string; value: (row: T) => CsvValue }>, rows: Iterable<T>, batch = 200): Generator<string> {
  let chunk = csvRecord(columns.map((c) => c.header));
  let n = 0;
  for (const row of rows) {
    chunk += csvRecord(columns.map((c) => c.value(row)));
    if (++n % batch === 0) {
      yield chunk;
      chunk = '';
    }
  }
  if (chunk) yield chunk;
}
