// Bulk import of nodes from CSV or GeoJSON: a dry run first (the server
// validates every row and answers with a preview and row-level errors), then
// the real import, which writes all rows or none.
import { ApiError, importNodes, type ImportPreview, type ImportRowError } from '../api.ts';
import type { PlanStore } from '../plan-store.ts';
import { announce, errorText, field, h, notice, openDialog, select } from '../ui.ts';

const csvExample = 'name,lat,lon,deviceType,antennaHeightAglM,environment\nProbe 1,40.0100,-105.2000,soil probe,1.5,outdoor';

/** `onImported` gets the imported nodes (the map moves onto them). */
export function openImportDialog(store: PlanStore, onImported?: (nodes: Array<{ lat: number; lon: number }>) => void): void {
  openDialog('Import nodes', (body, close) => {
    const format = select(
      [
        { value: 'csv', label: 'CSV (header row)' },
        { value: 'geojson', label: 'GeoJSON (FeatureCollection of points)' },
      ],
      'csv',
      { id: 'import-format' },
    );
    const file = h('input', { type: 'file', id: 'import-file', accept: '.csv,.geojson,.json,text/csv,application/geo+json,application/json' });
    const text = h('textarea', { id: 'import-text', rows: '8', spellcheck: 'false', class: 'mono' });
    text.placeholder = csvExample;
    const out = h('div', { id: 'import-result', 'aria-live': 'polite' });
    const previewButton = h('button', { type: 'button', id: 'import-preview', class: 'primary' }, 'Check the rows');
    const commitButton = h('button', { type: 'button', id: 'import-commit', disabled: true }, 'Import');
    body.append(
      h('p', {}, 'Columns: name, lat, lon (WGS84 degrees), deviceType; optional antennaDesignId, antennaHeightAglM (m), feedlineId, feedlineLengthM (m), txPowerDbm (dBm), environment (outdoor, indoor, pit), notes. Nothing is written until every row is valid.'),
      field('Format', format),
      field('File', file),
      field('…or paste the content', text),
      h('div', { class: 'dialog-actions' }, previewButton, commitButton, h('button', { type: 'button', onclick: close }, 'Close')),
      out,
    );
    file.addEventListener('change', () => {
      const f = file.files?.[0];
      if (!f) return;
      if (/\.(geo)?json$/i.test(f.name)) format.value = 'geojson';
      void f.text().then((content) => {
        text.value = content;
        commitButton.disabled = true;
      });
    });
    text.addEventListener('input', () => {
      commitButton.disabled = true;
    });
    const run = async (dryRun: boolean): Promise<void> => {
      const content = text.value;
      if (!content.trim()) {
        out.replaceChildren(notice('error', 'Choose a file or paste the rows first.'));
        return;
      }
      out.replaceChildren(h('p', { class: 'muted' }, dryRun ? 'Checking…' : 'Importing…'));
      try {
        const result = await importNodes(store.planId, format.value as 'csv' | 'geojson', content, dryRun);
        // A dry run answers the row errors and a preview; a commit answers what it stored
        // (created, items) and no errors list at all.
        if ('dryRun' in result) {
          showResult(out, result.errors, result);
          commitButton.disabled = result.errors.length > 0;
        } else {
          showResult(out, [], null, result.created);
          commitButton.disabled = true;
          await store.reloadAll();
          onImported?.(result.items);
          announce(`Imported ${result.created} nodes`);
        }
      } catch (err) {
        const rows = err instanceof ApiError ? rowErrorsOf(err) : null;
        if (rows) showResult(out, rows, null);
        else out.replaceChildren(notice('error', `The import failed: ${errorText(err)}`));
        commitButton.disabled = true;
      }
    };
    previewButton.addEventListener('click', () => void run(true));
    commitButton.addEventListener('click', () => void run(false));
  });
}

/** A 400 invalid_rows from the import route carries the row errors (error.rows). */
function rowErrorsOf(err: ApiError): ImportRowError[] | null {
  return Array.isArray(err.detail) ? (err.detail as ImportRowError[]) : null;
}

/** Row errors, else the dry run's preview (`preview`), else the count stored (`created`). */
function showResult(out: HTMLElement, errors: ImportRowError[], preview: ImportPreview | null, created?: number): void {
  const parts: HTMLElement[] = [];
  if (errors.length > 0) {
    parts.push(notice('error', `${errors.length} row(s) have problems; nothing was imported. Fix them and check again.`));
    parts.push(
      h(
        'table',
        { class: 'data-table compact', id: 'import-errors' },
        h('caption', {}, 'Rows with problems'),
        h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Row'), h('th', { scope: 'col' }, 'Field'), h('th', { scope: 'col' }, 'Problem'))),
        h('tbody', {}, ...errors.map((e) => h('tr', {}, h('td', {}, String(e.row)), h('td', {}, e.field ?? '–'), h('td', {}, e.message)))),
      ),
    );
  } else if (preview) {
    parts.push(notice('ok', `All ${preview.rowCount} row(s) are valid. Press “Import” to add them.`));
  } else {
    parts.push(notice('ok', `Imported ${created ?? 0} node(s).`));
  }
  const rows = preview?.preview ?? [];
  if (rows.length > 0) {
    const cols = ['name', 'lat', 'lon', 'deviceType', 'antennaHeightAglM', 'environment'] as const;
    parts.push(
      h(
        'div',
        { class: 'table-scroll' },
        h(
          'table',
          { class: 'data-table compact', id: 'import-preview-table' },
          h('caption', {}, `Preview (first ${Math.min(rows.length, 20)} of ${rows.length} valid rows)`),
          h('thead', {}, h('tr', {}, ...cols.map((c) => h('th', { scope: 'col' }, c)))),
          h('tbody', {}, ...rows.slice(0, 20).map((row) => h('tr', {}, ...cols.map((c) => h('td', {}, row[c] === undefined ? '–' : String(row[c])))))),
        ),
      ),
    );
  }
  out.replaceChildren(...parts);
}
