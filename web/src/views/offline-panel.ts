// The installer view with no signal: "keep this node on this device" (node panel, kit,
// visit sheet, build sheet, expected readings, cautions and the map tiles around it),
// the storage that uses, a small map drawn from the kept tiles, and the outbox of
// readings and install-status changes not yet sent (conflicts shown for the installer
// to decide). The storage and the sending live in web/src/offline/device.ts.
import * as L from 'leaflet';
import { hillshadeTileUrl, type FleetNode } from '../api.ts';
import { discardEntry, forgetNode, isKept, KEPT_ZOOMS, keepNode, keptNodes, offlineSupported, outbox, outboxEvent, resolveConflict, storageUsed, tileBlob, type OutboxEntry } from '../offline/device.ts';
import { announce, errorText, h, notice } from '../ui.ts';

const megabytes = (bytes: number) => `${(bytes / 1024 / 1024).toFixed(2)} MB`;

/** Leaflet tiles fetched as blobs (the request carries the API headers; offline the service worker answers from the device). */
const BlobTiles = L.GridLayer.extend({
  createTile(this: L.GridLayer & { options: { template: string } }, coords: L.Coords, done: L.DoneCallback) {
    const img = document.createElement('img');
    img.alt = '';
    const url = this.options.template.replace('{z}', String(coords.z)).replace('{x}', String(coords.x)).replace('{y}', String(coords.y));
    void tileBlob(url)
      .then((blob) => {
        if (blob) img.src = URL.createObjectURL(blob);
        img.dataset.kept = blob ? 'yes' : 'empty';
        done(undefined, img);
      })
      .catch((err: unknown) => done(err instanceof Error ? err : new Error(String(err)), img));
    return img;
  },
});

function miniMap(box: HTMLElement, planId: string, node: FleetNode): void {
  const mapEl = h('div', { class: 'offline-map', id: 'offline-map', role: 'img', 'aria-label': `Terrain around ${node.name} (hillshade)` });
  box.append(mapEl);
  // Fixed view at the kept zoom levels: the tiles shown are the ones the device holds.
  const map = L.map(mapEl, { center: [node.lat, node.lon], zoom: KEPT_ZOOMS[1], minZoom: KEPT_ZOOMS[0], maxZoom: KEPT_ZOOMS[KEPT_ZOOMS.length - 1], dragging: false, scrollWheelZoom: false, doubleClickZoom: false, boxZoom: false, keyboard: false, attributionControl: false });
  new (BlobTiles as unknown as new (options: L.GridLayerOptions & { template: string }) => L.GridLayer)({ template: hillshadeTileUrl(planId), tileSize: 256 }).addTo(map);
  L.circleMarker([node.lat, node.lon], { radius: 6, color: '#9c1c6b', weight: 2, fillColor: '#fff', fillOpacity: 1 }).addTo(map);
}

/** The "on this device" card of one node. */
export function offlineCard(planId: string, node: FleetNode): HTMLElement {
  const card = h('section', { class: 'card', id: 'offline-card', 'aria-labelledby': 'offline-h' }, h('h2', { id: 'offline-h' }, 'For a visit with no signal'));
  if (!offlineSupported()) {
    card.append(notice('info', 'This browser cannot keep pages for offline use.'));
    return card;
  }
  const state = h('p', { id: 'offline-state', 'aria-live': 'polite' }, 'Checking this device…');
  const used = h('p', { class: 'muted small', id: 'offline-storage' });
  const button = h('button', { type: 'button', id: 'offline-keep' }, 'Keep this node on this device');
  const mapBox = h('div', {});
  card.append(
    h('p', { class: 'muted small' }, `Keeps the node, its kit, the visit sheet, build sheet, expected readings, cautions and terrain tiles around it (zoom ${KEPT_ZOOMS[0]}–${KEPT_ZOOMS[KEPT_ZOOMS.length - 1]}) on this device. Readings and status changes made with no signal wait here and are sent when the connection returns.`),
    state,
    h('div', { class: 'button-row' }, button),
    used,
    mapBox,
  );
  const refresh = async () => {
    const kept = await isKept(planId, node.id);
    const all = await keptNodes();
    const usage = await storageUsed();
    state.textContent = kept ? `Kept on this device (${all.length} node${all.length === 1 ? '' : 's'} in all).` : navigator.onLine ? 'Not kept on this device.' : 'Not kept on this device; you are offline.';
    button.textContent = kept ? 'Stop keeping this node' : 'Keep this node on this device';
    button.dataset.kept = kept ? 'yes' : 'no';
    used.textContent = `Storage used by earshot on this device: ${megabytes(usage.keptBytes)} (map tiles ${megabytes(usage.tileBytes)})${usage.browserBytes !== null ? `; the browser reports ${megabytes(usage.browserBytes)} for this site in all` : ''}.`;
    if (kept && !mapBox.firstChild) miniMap(mapBox, planId, node);
  };
  button.addEventListener('click', () => {
    button.disabled = true;
    const kept = button.dataset.kept === 'yes';
    const work = kept ? forgetNode(planId, node.id) : keepNode(planId, node, (text) => (state.textContent = text)).then((entry) => announce(`Kept ${entry.nodeName} with ${entry.tiles} map tiles`));
    void work
      .then(refresh)
      .catch((err: unknown) => (state.textContent = `Could not keep this node: ${errorText(err)}`))
      .finally(() => {
        button.disabled = false;
      });
  });
  void refresh().catch((err: unknown) => (state.textContent = `This device's storage is not available: ${errorText(err)}`));
  return card;
}

function entryItem(entry: OutboxEntry, redraw: () => void): HTMLElement {
  const when = new Date(entry.createdAt).toLocaleString();
  if (entry.state === 'conflict') {
    const keepServer = h('button', { type: 'button' }, "Keep the server's");
    const sendMine = h('button', { type: 'button' }, 'Send mine over it');
    keepServer.addEventListener('click', () => void resolveConflict(entry, 'server').then(redraw));
    sendMine.addEventListener('click', () => void resolveConflict(entry, 'mine').then(redraw).catch((err: unknown) => announce(`Not sent: ${errorText(err)}`)));
    return h(
      'li',
      { class: 'conflict' },
      h('strong', {}, `Conflict — ${entry.nodeName}: ${entry.label}. `),
      `Someone else changed this node first: on the server its install status is now ${entry.serverInstallStatus ?? 'unknown'}. Nothing was overwritten. `,
      h('div', { class: 'button-row' }, keepServer, sendMine),
    );
  }
  if (entry.state === 'failed') {
    const drop = h('button', { type: 'button' }, 'Discard');
    drop.addEventListener('click', () => void discardEntry(entry).then(redraw));
    return h('li', { class: 'failed' }, h('strong', {}, `Refused by the server — ${entry.nodeName}: ${entry.label}. `), entry.problem ?? '', ' ', drop);
  }
  return h('li', { class: 'pending' }, h('strong', {}, 'Not yet sent: '), `${entry.nodeName}: ${entry.label} (saved on this device ${when}).`);
}

/** The outbox, redrawn whenever it changes. */
export function outboxPanel(): HTMLElement {
  const box = h('section', { class: 'card outbox', id: 'outbox', 'aria-live': 'polite', hidden: true });
  if (!offlineSupported()) return box;
  let shown = false;
  const redraw = (): void => {
    // The panel left the page (another view): stop listening.
    if (shown && !box.isConnected) {
      for (const name of [outboxEvent, 'online', 'offline']) window.removeEventListener(name, redraw);
      return;
    }
    shown = true;
    void outbox()
      .then((entries) => {
        box.hidden = entries.length === 0;
        const pending = entries.filter((e) => e.state === 'pending').length;
        box.replaceChildren(
          h('h2', {}, `On this device, not yet sent (${entries.length})`),
          pending ? h('p', { class: 'muted small' }, navigator.onLine ? 'Sending…' : 'You are offline: these are sent when the connection returns.') : '',
          h('ul', {}, ...entries.map((e) => entryItem(e, redraw))),
        );
      })
      .catch(() => undefined);
  };
  window.addEventListener(outboxEvent, redraw);
  window.addEventListener('online', redraw);
  window.addEventListener('offline', redraw);
  redraw();
  return box;
}
