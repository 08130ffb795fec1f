// Bulk node import: CSV (RFC 4180: header row, comma separated, "quoted" fields with ""
// escapes) or a GeoJSON FeatureCollection of Points (RFC 7946: coordinates [lon, lat]).
// Rows are validated one by one with the same schema as POST /nodes; the caller writes
// all of them in one transaction or none.
import { z } from 'zod';

export interface RowError {
  /** 1-based data row (CSV: not counting the header; GeoJSON: feature number). */
  row: number;
  field: string;
  message: string;
}

export class ImportFormatError extends Error {}

export function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let field = '';
  let quoted = false;
  let i = 0;
  const input = text.replace(/^\uFEFF/, '');
  while (i < input.length) {
    const c = input[i];
    if (quoted) {
      if (c === '"') {
        if (input[i + 1] === '"') {
          field += '"';
          i += 2;
          continue;
        }
        quoted = false;
        i++;
        continue;
      }
      field += c;
      i++;
      continue;
    }
    if (c === '"' && field === '') {
      quoted = true;
    } else if (c === ',') {
      row.push(field);
      field = '';
    } else if (c === '\n' || c === '\r') {
      row.push(field);
      field = '';
      rows.push(row);
      row = [];
      if (c === '\r' && input[i + 1] === '\n') i++;
    } else {
      field += c;
    }
    i++;
  }
  if (quoted) throw new ImportFormatError('CSV: a quoted field is not closed');
  if (field !== '' || row.length > 0) {
    row.push(field);
    rows.push(row);
  }
  return rows.filter((cells) => !(cells.length === 1 && cells[0].trim() === ''));
}

const numericFields = new Set(['lat', 'lon', 'antennaHeightAglM', 'feedlineLengthM', 'txPowerDbm', 'fixedSf', 'payloadBytes', 'messagesPerHour']);
const aliases: Record<string, string> = {
  latitude: 'lat',
  longitude: 'lon',
  lng: 'lon',
  long: 'lon',
  type: 'deviceType',
  device: 'deviceType',
  antenna: 'antennaDesignId',
  feedline: 'feedlineId',
  mast: 'mastOptionId',
  height: 'antennaHeightAglM',
};

/**
 * How another importer (e.g. field readings, server/app/readings-import.ts) reads the same
 * formats: its numeric columns, its header aliases (lower case, camel-cased words), whether a
 * GeoJSON feature must have a Point, and whether a plain JSON array of records is accepted.
 */
export interface ImportFormat {
  numericFields: ReadonlySet<string>;
  aliases: Readonly<Record<string, string>>;
  geometry: 'required' | 'optional';
  jsonArrays: boolean;
}

const nodeFormat: ImportFormat = { numericFields, aliases, geometry: 'required', jsonArrays: false };

/** "Device Type", "device_type", "device-type" -> "deviceType"; then aliases. */
export function normaliseHeader(header: string, known: readonly string[], headerAliases: Readonly<Record<string, string>> = aliases): string {
  const words = header.trim().split(/[\s_-]+/).filter(Boolean);
  const camel = words.map((word, index) => (index === 0 ? word.toLowerCase() : word[0].toUpperCase() + word.slice(1).toLowerCase())).join('');
  const exact = known.find((field) => field.toLowerCase() === camel.toLowerCase());
  if (exact) return exact;
  return headerAliases[camel.toLowerCase()] ?? camel;
}

const decimalNumber = /^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$/;

function cellValue(field: string, raw: string, format: ImportFormat): unknown {
  const value = raw.trim();
  if (value === '') return undefined;
  if (format.numericFields.has(field)) {
    // Plain decimal only (optional sign, fraction and exponent): Number() would also read
    // "0x10" as 16, "0b1" as 1, "Infinity" and "1_0"-free oddities, which no sheet means.
    if (!decimalNumber.test(value)) return value; // the schema reports "must be a number"
    const number = Number(value);
    return Number.isFinite(number) ? number : value;
  }
  return value;
}

/** Raw records from a CSV text or a GeoJSON object (or, where the format allows, a JSON array of records). */
export function importRecords(body: unknown, known: readonly string[], format: ImportFormat = nodeFormat): Record<string, unknown>[] {
  if (typeof body === 'string') {
    const trimmed = body.trim();
    if (trimmed.startsWith('{') || (format.jsonArrays && trimmed.startsWith('['))) {
      try {
        return importRecords(JSON.parse(trimmed), known, format);
      } catch (error) {
        if (error instanceof ImportFormatError) throw error;
        throw new ImportFormatError('body: looks like JSON but does not parse');
      }
    }
    const rows = parseCsv(body);
    if (rows.length < 2) throw new ImportFormatError('CSV: needs a header row and at least one data row');
    const headers = rows[0].map((header) => normaliseHeader(header, known, format.aliases));
    return rows.slice(1).map((cells) => {
      const record: Record<string, unknown> = {};
      headers.forEach((header, index) => {
        const value = cellValue(header, cells[index] ?? '', format);
        if (value !== undefined) record[header] = value;
      });
      return record;
    });
  }
  if (format.jsonArrays && Array.isArray(body)) {
    return body.map((item: unknown) => {
      const record: Record<string, unknown> = {};
      if (item && typeof item === 'object' && !Array.isArray(item)) for (const [key, value] of Object.entries(item)) record[normaliseHeader(key, known, format.aliases)] = value;
      return record;
    });
  }
  const collection = body as { type?: unknown; features?: unknown };
  if (!collection || typeof collection !== 'object' || collection.type !== 'FeatureCollection' || !Array.isArray(collection.features)) {
    throw new ImportFormatError(format.jsonArrays ? 'body: send CSV (text/csv), a JSON array of records or a GeoJSON FeatureCollection' : 'body: send CSV (text/csv) or a GeoJSON FeatureCollection of Point features');
  }
  return collection.features.map((feature: { geometry?: { type?: string; coordinates?: unknown } | null; properties?: Record<string, unknown> | null }, index) => {
    const record: Record<string, unknown> = {};
    for (const [key, value] of Object.entries(feature?.properties ?? {})) record[normaliseHeader(key, known, format.aliases)] = value;
    const geometry = feature?.geometry;
    if (geometry?.type === 'Point' && Array.isArray(geometry.coordinates) && geometry.coordinates.length >= 2) {
      record.lon = geometry.coordinates[0];
      record.lat = geometry.coordinates[1];
    } else if (format.geometry === 'optional' && (geometry === null || geometry === undefined)) {
      // a feature without a place: the record carries no position
    } else {
      record.__geometryError = `feature ${index + 1}: geometry must be a Point [lon, lat]`;
    }
    return record;
  });
}

/** Validates every record; returns the parsed rows or every row-level error. */
export function validateRecords<T extends z.ZodType>(records: Record<string, unknown>[], schema: T): { rows: z.infer<T>[]; errors: RowError[] } {
  const rows: z.infer<T>[] = [];
  const errors: RowError[] = [];
  records.forEach((record, index) => {
    if (typeof record.__geometryError === 'string') {
      errors.push({ row: index + 1, field: 'geometry', message: 'must be a Point [lon, lat]' });
      return;
    }
    const parsed = schema.safeParse(record);
    if (parsed.success) {
      rows.push(parsed.data);
      return;
    }
    for (const issue of parsed.error.issues) {
      if (issue.code === 'unrecognized_keys') {
        for (const key of issue.keys) errors.push({ row: index + 1, field: key, message: 'unknown column' });
      } else {
        errors.push({ row: index + 1, field: issue.path.join('.') || '(row)', message: issue.message });
      }
    }
  });
  return { rows, errors };
}
