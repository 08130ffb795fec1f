// Edit forms for nodes, gateways and candidate sites, built from one field
// list per kind. Only changed fields are sent, together with the version the
// form was opened on (a stale version comes back as 409 and is explained).
import type { Catalog, Entity, EntityKind, FieldRanges } from '../api.ts';
import { applyRange, rangeProblem } from '../ranges.ts';
import { field, h, openDialog, select } from '../ui.ts';

interface FieldSpec {
  key: string;
  label: string;
  type: 'text' | 'number' | 'select' | 'textarea';
  unit?: string;
  min?: number;
  max?: number;
  step?: number;
  /** The server's range for this quantity (GET /client-settings), which overrides min/max/step. */
  range?: keyof FieldRanges;
  required?: boolean;
  options?: (catalog: Catalog) => Array<{ value: string; label: string }>;
  hint?: string;
}

const antennaOptions = (c: Catalog): Array<{ value: string; label: string }> =>
  c.antennas.map((a) => ({ value: a.id, label: `${a.name} (${a.gainDbi.toFixed(1)} dBi)` }));
const feedlineOptions = (c: Catalog, allowNone: boolean): Array<{ value: string; label: string }> => [
  ...(allowNone ? [{ value: '', label: 'none (antenna on the device)' }] : []),
  ...c.feedlines.map((f) => ({ value: f.id, label: `${f.name} (${f.lossDbPer100m.toFixed(1)} dB/100 m)` })),
];

const position: FieldSpec[] = [
  { key: 'name', label: 'Name', type: 'text', required: true },
  { key: 'lat', label: 'Latitude (°, WGS84)', type: 'number', min: -90, max: 90, step: 0.000001, required: true },
  { key: 'lon', label: 'Longitude (°, WGS84)', type: 'number', min: -180, max: 180, step: 0.000001, required: true },
];

export const fieldSpecs: Record<EntityKind, FieldSpec[]> = {
  nodes: [
    ...position,
    { key: 'deviceType', label: 'Device type', type: 'text', required: true, hint: 'e.g. soil probe, water meter, tank level' },
    {
      key: 'environment',
      label: 'Environment',
      type: 'select',
      options: () => [
        { value: 'outdoor', label: 'outdoor' },
        { value: 'indoor', label: 'indoor (building entry loss)' },
        { value: 'pit', label: 'pit or meter box (below ground)' },
      ],
    },
    { key: 'antennaDesignId', label: 'Antenna design', type: 'select', options: antennaOptions },
    { key: 'antennaHeightAglM', label: 'Antenna height above ground (m)', type: 'number', min: -10, max: 200, step: 0.1, unit: 'm', range: 'nodeAntennaHeightAglM', hint: 'negative for a pit or meter box below ground' },
    { key: 'feedlineId', label: 'Feedline', type: 'select', options: (c) => feedlineOptions(c, true) },
    { key: 'feedlineLengthM', label: 'Feedline length (m)', type: 'number', min: 0, max: 500, step: 0.1, unit: 'm', range: 'nodeFeedlineLengthM' },
    { key: 'txPowerDbm', label: 'Transmit power (dBm)', type: 'number', min: -10, max: 30, step: 0.5, unit: 'dBm', range: 'nodeTxPowerDbm' },
    { key: 'payloadBytes', label: 'Payload (bytes)', type: 'number', min: 1, max: 255, step: 1, range: 'payloadBytes' },
    { key: 'messagesPerHour', label: 'Messages per hour', type: 'number', min: 0, max: 3600, step: 0.1 },
    { key: 'notes', label: 'Notes (access, landmarks)', type: 'textarea' },
  ],
  gateways: [
    ...position,
    { key: 'antennaDesignId', label: 'Antenna design', type: 'select', options: antennaOptions },
    { key: 'antennaHeightAglM', label: 'Antenna height above ground (m)', type: 'number', min: 0, max: 500, step: 0.5, unit: 'm', range: 'gatewayAntennaHeightAglM' },
    {
      key: 'antennaAzimuthDeg',
      label: 'Antenna azimuth (°, clockwise from true north)',
      type: 'number',
      min: 0,
      max: 359.9,
      step: 0.1,
      unit: '°',
      hint: 'where a directional antenna points; leave empty for an omni, or to aim at each node',
    },
    { key: 'feedlineId', label: 'Feedline', type: 'select', options: (c) => feedlineOptions(c, false) },
    { key: 'feedlineLengthM', label: 'Feedline length (m)', type: 'number', min: 0, max: 1000, step: 0.5, unit: 'm', range: 'gatewayFeedlineLengthM' },
    { key: 'noiseFigureDb', label: 'Receiver noise figure (dB)', type: 'number', min: 0, max: 20, step: 0.1, unit: 'dB', range: 'noiseFigureDb' },
    { key: 'txPowerDbm', label: 'Transmit power (dBm)', type: 'number', min: -10, max: 36, step: 0.5, unit: 'dBm', range: 'gatewayTxPowerDbm' },
    { key: 'notes', label: 'Notes', type: 'textarea' },
  ],
  sites: [
    ...position,
    {
      key: 'kind',
      label: 'Kind',
      type: 'select',
      options: () => [
        { value: 'candidate', label: 'candidate' },
        { value: 'used', label: 'used (a gateway is mounted here)' },
      ],
    },
    { key: 'maxAntennaHeightAglM', label: 'Highest mounting height allowed (m)', type: 'number', min: 0, max: 300, step: 0.5, unit: 'm' },
    { key: 'costUsd', label: 'Site cost (USD)', type: 'number', min: 0, step: 1 },
    { key: 'notes', label: 'Notes (owner, access, permits)', type: 'textarea' },
  ],
};

export const kindLabel: Record<EntityKind, string> = { nodes: 'node', gateways: 'gateway', sites: 'candidate site' };

/** Opens the form; `save` receives only the changed fields and resolves with an error text or null. */
export function openEditDialog(
  kind: EntityKind,
  entity: Entity,
  catalog: Catalog,
  save: (changes: Record<string, unknown>) => Promise<string | null>,
  /** Adds live read-outs under the fields (the gateway's EIRP and legal check). */
  decorate?: (controls: ReadonlyMap<string, HTMLInputElement | HTMLSelectElement | HTMLTextAreaElement>, form: HTMLFormElement) => void,
): void {
  openDialog(`Edit ${kindLabel[kind]}: ${entity.name}`, (body, close) => {
    const form = h('form', { class: 'edit-form' });
    const controls = new Map<string, HTMLInputElement | HTMLSelectElement | HTMLTextAreaElement>();
    const record = entity as unknown as Record<string, unknown>;
    for (const spec of fieldSpecs[kind]) {
      const current = record[spec.key];
      let control: HTMLInputElement | HTMLSelectElement | HTMLTextAreaElement;
      if (spec.type === 'select' && spec.options) {
        control = select(spec.options(catalog), current === null || current === undefined ? '' : String(current), { name: spec.key });
      } else if (spec.type === 'textarea') {
        control = h('textarea', { name: spec.key, rows: '3' });
        control.value = current === null || current === undefined ? '' : String(current);
      } else {
        control = h('input', {
          name: spec.key,
          type: spec.type,
          min: spec.min,
          max: spec.max,
          step: spec.step ?? (spec.type === 'number' ? 'any' : undefined),
          required: spec.required,
        });
        if (spec.range) applyRange(control, spec.range);
        control.value = current === null || current === undefined ? '' : String(current);
      }
      controls.set(spec.key, control);
      form.append(field(spec.label, control, spec.hint));
    }
    decorate?.(controls, form);
    const status = h('div', { 'aria-live': 'polite' });
    form.append(
      h('div', { class: 'dialog-actions' }, h('button', { type: 'submit', class: 'primary' }, 'Save'), h('button', { type: 'button', onclick: close }, 'Cancel')),
      status,
    );
    form.addEventListener('submit', (event) => {
      event.preventDefault();
      const changes: Record<string, unknown> = {};
      // The server's ranges, checked before sending (the API answers 400 with the same rule).
      const problems = fieldSpecs[kind]
        .filter((spec) => spec.type === 'number' && controls.get(spec.key)?.value !== '')
        .map((spec) => rangeProblem(spec.label, controls.get(spec.key) as HTMLInputElement))
        .filter((p): p is string => p !== null);
      if (problems.length > 0) {
        status.textContent = problems.join(' ');
        return;
      }
      for (const spec of fieldSpecs[kind]) {
        const control = controls.get(spec.key);
        if (!control) continue;
        const raw = control.value;
        const before = record[spec.key];
        let value: unknown;
        if (spec.type === 'number') value = raw === '' ? null : Number(raw);
        else if (spec.key === 'feedlineId' && raw === '') value = null;
        else value = raw;
        const same = (before === undefined || before === null ? null : before) === value || String(before ?? '') === String(value ?? '');
        if (!same) changes[spec.key] = value;
      }
      if (Object.keys(changes).length === 0) {
        close();
        return;
      }
      status.textContent = 'Saving…';
      void save(changes).then((problem) => {
        if (problem === null) close();
        else status.textContent = problem;
      });
    });
    body.append(form);
  });
}
