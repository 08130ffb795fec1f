// Terrain for a plan from the browser: choose a GeoTIFF, watch the upload and the server's
// checks, read the server's own error when it refuses (not a TIFF, no georeferencing, too
// big, outside the plan's objects), and move the map to the new layer.
import type { TerrainLayer } from '../api.ts';
import { isAbort } from '../api.ts';
import { uploadTerrain, type TerrainUpload } from '../api-terrain.ts';
import { announce, errorText, field, h, notice, openDialog, select } from '../ui.ts';

const mib = (bytes: number): string => `${(bytes / 1_048_576).toFixed(1)} MB`;

export function openTerrainUploadDialog(planId: string, onUploaded: (layer: TerrainLayer) => void): void {
  openDialog('Upload terrain (GeoTIFF)', (body, close) => {
    const file = h('input', { type: 'file', id: 'terrain-file', accept: '.tif,.tiff,image/tiff' });
    const kind = select(
      [
        { value: 'elevation', label: 'Elevation (DEM, metres above sea level)' },
        { value: 'clutter', label: 'Clutter (land-cover classes)' },
      ],
      'elevation',
      { id: 'terrain-kind' },
    );
    const name = h('input', { type: 'text', id: 'terrain-name', maxlength: '200', placeholder: 'e.g. valley DEM 30 m' });
    const bar = h('progress', { id: 'terrain-progress', max: '1', value: '0', 'aria-label': 'Upload progress' });
    const state = h('p', { id: 'terrain-state', 'aria-live': 'polite', class: 'muted' });
    const out = h('div', { id: 'terrain-result', 'aria-live': 'polite' });
    const send = h('button', { type: 'submit', class: 'primary', id: 'terrain-send' }, 'Upload');
    const cancel = h('button', { type: 'button' }, 'Close');
    let upload: TerrainUpload | null = null;
    cancel.addEventListener('click', () => {
      upload?.abort();
      close();
    });
    const form = h(
      'form',
      { class: 'stack' },
      field('GeoTIFF file', file, 'A georeferenced GeoTIFF; any projected or geographic CRS with an EPSG code. The server checks every block before it keeps the file.'),
      field('Layer', kind),
      field('Name (optional)', name),
      bar,
      state,
      out,
      h('div', { class: 'dialog-actions' }, send, cancel),
    );
    body.append(form);
    form.addEventListener('submit', (event) => {
      event.preventDefault();
      const chosen = file.files?.[0];
      out.replaceChildren();
      if (!chosen) {
        out.append(notice('error', 'Choose a GeoTIFF file first.'));
        return;
      }
      send.disabled = true;
      bar.value = 0;
      state.textContent = `Uploading ${chosen.name} (${mib(chosen.size)})…`;
      upload = uploadTerrain(planId, chosen, { kind: kind.value as 'elevation' | 'clutter', name: name.value.trim() || undefined }, (p) => {
        const fraction = p.totalBytes > 0 ? p.loadedBytes / p.totalBytes : 0;
        bar.value = fraction;
        state.textContent = fraction < 1 ? `Uploading: ${mib(p.loadedBytes)} of ${mib(p.totalBytes)} (${Math.round(fraction * 100)} %)` : 'Uploaded; the server is checking the raster (georeferencing, every block)…';
      });
      upload.promise
        .then((layer) => {
          bar.value = 1;
          state.textContent = '';
          out.replaceChildren(notice('ok', `Terrain layer “${String(layer.name ?? '')}” added. The map moves to it.`));
          announce('Terrain uploaded');
          onUploaded(layer);
          window.setTimeout(close, 900);
        })
        .catch((err: unknown) => {
          send.disabled = false;
          if (isAbort(err)) return;
          state.textContent = '';
          bar.value = 0;
          out.replaceChildren(notice('error', `The server did not accept the file: ${errorText(err)}`));
        });
    });
  });
}
