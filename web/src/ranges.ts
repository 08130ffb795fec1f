// The valid range of each physical input, as the server defines it (FIELD_RANGES in
// server/planning/field-ranges.ts, served by GET /client-settings). Every form sets its inputs'
// min/max/step from here and checks typed values against the same limits, so the forms
// and the API accept the same numbers.
import { getClientSettings, type FieldRange, type FieldRanges } from './api.ts';

let ranges: FieldRanges | null = null;
let loading: Promise<FieldRanges | null> | null = null;

/** Loads the ranges once (an older server without them: the forms keep their own attributes). */
export function loadFieldRanges(): Promise<FieldRanges | null> {
  loading ??= getClientSettings()
    .then((settings) => (ranges = settings.ranges ?? null))
    .catch(() => {
      loading = null;
      return null;
    });
  return loading;
}

export function fieldRange(name: keyof FieldRanges): FieldRange | null {
  return ranges ? (ranges[name] ?? null) : null;
}

/** Sets an input's min, max and step from the server's range for `name`. */
export function applyRange(input: HTMLInputElement, name: keyof FieldRanges): HTMLInputElement {
  const range = fieldRange(name);
  if (range) {
    input.min = String(range.min);
    input.max = String(range.max);
    input.step = String(range.step);
    if (!input.title) input.title = `${range.min} to ${range.max} ${range.unit}: ${range.note}`;
  }
  return input;
}

/** "<label>: a number from <min> to <max> <unit>." when the input's value breaks its range, else null. */
export function rangeProblem(label: string, input: HTMLInputElement): string | null {
  const value = Number(input.value);
  const min = input.min === '' ? -Infinity : Number(input.min);
  const max = input.max === '' ? Infinity : Number(input.max);
  if (input.value.trim() === '' || !Number.isFinite(value) || value < min || value > max) {
    return `${label}: a number from ${input.min || '−∞'} to ${input.max || '∞'}.`;
  }
  return null;
}
