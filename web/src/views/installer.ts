// Installer mode: a narrow, phone-sized layout for one node. Where it is
// (coordinates), what to bring and how high to mount it (visit sheet), what
// the gateway should hear, the safety cautions, and a form to record the
// RSSI/SNR actually measured (shown beside the prediction).
import {
  getLinkCheck,
  getNodeLinks,
  getVisitSheet,
  postReading,
  visitSheetUrl,
  type FleetNode,
  type LinkCheck,
  type NodeLinks,
} from '../api.ts';
import { explainWriteError, PlanStore } from '../plan-store.ts';
import type { Route } from '../router.ts';
import { planHash } from '../router.ts';
import { canRecordReadings } from '../session.ts';
import { announce, cautionsBlock, coords, db, dbm, errorText, field, h, notice, percent, select } from '../ui.ts';
import { nodeSymbolSvg, statusStyle, symbolElement } from '../symbols.ts';
import { kitLabel } from './node-panel.ts';

export async function renderInstaller(main: HTMLElement, route: Route): Promise<void> {
  main.classList.add('narrow');
  const store = new PlanStore(route.planId as string);
  await store.load();
  if (!route.nodeId) {
    renderNodeChooser(main, store);
    return;
  }
  const node = store.find('nodes', route.nodeId) as FleetNode | undefined;
  if (!node) {
    main.append(notice('error', 'This node is not in the plan (it may have been deleted).'), h('a', { href: planHash(store.planId, '/install') }, 'Choose another node'));
    return;
  }
  await renderNodeVisit(main, store, node);
}

function renderNodeChooser(main: HTMLElement, store: PlanStore): void {
  main.append(h('h1', {}, 'Installer: choose a node'), h('p', { class: 'muted' }, store.plan.name));
  const order = { 'needs-visit': 0, planned: 1, installed: 2 } as Record<string, number>;
  const nodes = [...store.nodes].sort((a, b) => (order[a.installStatus ?? 'planned'] ?? 1) - (order[b.installStatus ?? 'planned'] ?? 1) || a.name.localeCompare(b.name, undefined, { numeric: true }));
  main.append(
    h(
      'ul',
      { class: 'node-choice' },
      ...nodes.map((n) => {
        const status = store.fleet.get(n.id)?.status ?? 'unknown';
        return h(
          'li',
          {},
          h(
            'a',
            { href: planHash(store.planId, `/install/${encodeURIComponent(n.id)}`) },
            symbolElement(nodeSymbolSvg(status, 16), statusStyle[status].label),
            ` ${n.name}`,
            h('span', { class: 'muted small' }, ` · ${n.installStatus ?? 'planned'} · ${n.deviceType}`),
          ),
        );
      }),
    ),
  );
}

async function renderNodeVisit(main: HTMLElement, store: PlanStore, node: FleetNode): Promise<void> {
  const status = store.fleet.get(node.id)?.status ?? 'unknown';
  const [linksR, checkR, sheetR] = await Promise.allSettled([getNodeLinks(store.planId, node.id), getLinkCheck(store.planId, node.id), getVisitSheet(store.planId, node.id)]);
  const links: NodeLinks | null = linksR.status === 'fulfilled' ? linksR.value : null;
  const check: LinkCheck | null = checkR.status === 'fulfilled' ? checkR.value : null;
  const sheet = sheetR.status === 'fulfilled' ? sheetR.value : null;

  main.append(
    h('p', {}, h('a', { href: planHash(store.planId, '/install') }, '← all nodes')),
    h('h1', {}, symbolElement(nodeSymbolSvg(status, 20), ''), ` ${node.name}`),
    h('p', { class: `status-line status-${status}` }, statusStyle[status].label, links ? ` · delivery ${percent(links.combinedDeliveryProbability)}` : ''),
  );

  // where
  const coordText = coords(node.lat, node.lon);
  const copy = h('button', { type: 'button', onclick: () => void navigator.clipboard?.writeText(`${node.lat.toFixed(6)}, ${node.lon.toFixed(6)}`).then(() => announce('Coordinates copied')) }, 'Copy coordinates');
  main.append(
    h(
      'section',
      { class: 'card', 'aria-labelledby': 'where-h' },
      h('h2', { id: 'where-h' }, 'Where'),
      h('p', { class: 'big-coords', id: 'install-coords' }, coordText),
      h('p', { class: 'muted small' }, `Decimal: ${node.lat.toFixed(6)}, ${node.lon.toFixed(6)} (WGS84)`),
      h('div', { class: 'button-row' }, copy, h('a', { class: 'button', href: `geo:${node.lat.toFixed(6)},${node.lon.toFixed(6)}` }, 'Open in a maps app')),
      node.notes ? h('p', {}, h('strong', {}, 'Access notes: '), node.notes) : null,
    ),
  );

  // what to bring
  const kitSection = h('section', { class: 'card', 'aria-labelledby': 'kit-h' }, h('h2', { id: 'kit-h' }, 'Kit and mounting'), h('p', {}, kitLabel(store, node)));
  const rec = check?.recommendedKit;
  if (rec && (rec.antennaDesignId !== node.antennaDesignId || rec.mastHeightM !== node.antennaHeightAglM)) {
    kitSection.append(notice('info', `Recommended instead: ${kitLabel(store, rec)}`));
  }
  main.append(kitSection);

  // expected readings
  const exp = h('section', { class: 'card', 'aria-labelledby': 'exp-h' }, h('h2', { id: 'exp-h' }, 'What the gateway should hear'));
  if (links && links.links.length > 0) {
    const best = [...links.links].sort((a, b) => b.marginDb - a.marginDb)[0];
    const gw = store.gateways.find((g) => g.id === best.gatewayId)?.name ?? best.gatewayId;
    exp.append(
      h('p', {}, `Best gateway: ${gw}. Predicted RSSI ${dbm(best.rssiDbm)}, SNR ${db(best.snrDb)}, margin ${db(best.marginDb)}${best.bestSf ? ` at SF${best.bestSf}` : ''}.`),
    );
  }
  if (check?.expected?.rssiDbm) {
    exp.append(h('p', {}, `Likely range (10th–90th percentile): RSSI ${check.expected.rssiDbm.p10.toFixed(1)} to ${check.expected.rssiDbm.p90.toFixed(1)} dBm${check.expected.snrDb ? `, SNR ${check.expected.snrDb.p10.toFixed(1)} to ${check.expected.snrDb.p90.toFixed(1)} dB` : ''}.`));
  }
  if (!links) exp.append(notice('info', `Predictions: ${linksR.status === 'rejected' ? errorText(linksR.reason) : 'none'}.`));
  main.append(exp);

  // visit sheet
  const sheetBox = h(
    'section',
    { class: 'card', 'aria-labelledby': 'sheet-h' },
    h('h2', { id: 'sheet-h' }, 'Visit sheet'),
    h('p', {}, h('a', { href: visitSheetUrl(store.planId, node.id), target: '_blank', rel: 'noopener', id: 'visit-sheet-link' }, 'Open the printable visit sheet')),
  );
  if (sheet) sheetBox.append(renderSheet(sheet));
  else sheetBox.append(notice('info', `Visit sheet: ${sheetR.status === 'rejected' ? errorText(sheetR.reason) : 'empty'}.`));
  main.append(sheetBox);

  main.append(cautionsBlock(check?.cautions ?? []));

  // record a reading
  const form = h('form', { class: 'card reading-form', id: 'reading-form', 'aria-labelledby': 'reading-h' });
  form.append(h('h2', { id: 'reading-h' }, 'Record what you measured'));
  if (!canRecordReadings()) {
    form.append(h('p', { class: 'muted' }, 'Your role (viewer) cannot record readings.'));
    main.append(form);
    return;
  }
  const gateway = select(
    store.gateways.map((g) => ({ value: g.id, label: g.name })),
    links?.links.length ? [...links.links].sort((a, b) => b.marginDb - a.marginDb)[0].gatewayId : store.gateways[0]?.id,
    { id: 'reading-gateway', required: true },
  );
  const rssi = h('input', { id: 'reading-rssi', type: 'number', step: '0.1', min: '-160', max: '10', required: true, inputmode: 'decimal' });
  const snr = h('input', { id: 'reading-snr', type: 'number', step: '0.1', min: '-40', max: '40', required: true, inputmode: 'decimal' });
  const sf = select(
    [7, 8, 9, 10, 11, 12].map((v) => ({ value: String(v), label: `SF${v}` })),
    String(links?.links.find((l) => l.gatewayId === gateway.value)?.bestSf ?? 10),
    { id: 'reading-sf' },
  );
  const when = h('input', { id: 'reading-time', type: 'datetime-local', required: true });
  const now = new Date();
  when.value = new Date(now.getTime() - now.getTimezoneOffset() * 60000).toISOString().slice(0, 16);
  const note = h('textarea', { id: 'reading-note', rows: '2' });
  const out = h('div', { id: 'reading-result', 'aria-live': 'polite' });
  form.append(
    field('Gateway that heard the node', gateway),
    field('Measured RSSI (dBm)', rssi, 'From the gateway or network console, e.g. -112'),
    field('Measured SNR (dB)', snr, 'e.g. -7.5'),
    field('Spreading factor', sf),
    field('Measured at (local time)', when),
    field('Note', note),
    h('button', { type: 'submit', class: 'primary' }, 'Save reading'),
    out,
  );
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    const rssiDbm = Number(rssi.value);
    const snrDb = Number(snr.value);
    if (!Number.isFinite(rssiDbm) || !Number.isFinite(snrDb) || rssi.value === '' || snr.value === '') {
      out.replaceChildren(notice('error', 'Enter RSSI in dBm and SNR in dB as numbers.'));
      return;
    }
    out.replaceChildren(h('p', {}, 'Saving…'));
    void postReading(store.planId, {
      nodeId: node.id,
      gatewayId: gateway.value,
      rssiDbm,
      snrDb,
      sf: Number(sf.value),
      measuredAt: new Date(when.value).toISOString(),
      note: note.value || undefined,
    })
      .then((saved) => {
        const predicted = typeof saved.predictedRssiDbm === 'number' ? saved.predictedRssiDbm : links?.links.find((l) => l.gatewayId === gateway.value)?.rssiDbm;
        const diff = typeof saved.differenceDb === 'number' ? saved.differenceDb : typeof predicted === 'number' ? rssiDbm - predicted : null;
        out.replaceChildren(
          notice(
            'ok',
            h(
              'span',
              { id: 'reading-saved' },
              `Reading saved: RSSI ${dbm(rssiDbm)}, SNR ${db(snrDb)}.`,
              typeof predicted === 'number' ? ` Predicted ${dbm(predicted)}; measured minus predicted ${db(diff)}.` : '',
            ),
          ),
        );
        announce('Reading saved');
        rssi.value = '';
        snr.value = '';
      })
      .catch((err: unknown) => out.replaceChildren(notice('error', explainWriteError(err, store, 'the reading'))));
  });
  main.append(form);
}

function humanise(key: string): string {
  return key
    .replace(/([a-z])([A-Z])/g, '$1 $2')
    .replace(/Dbm\b/, '(dBm)')
    .replace(/Db\b/, '(dB)')
    .replace(/\bM\b$/, '(m)')
    .replace(/^./, (c) => c.toUpperCase());
}

/** Renders the visit sheet's JSON generically: sections for objects, lists for arrays. */
function renderSheet(value: unknown, depth = 0): HTMLElement {
  if (Array.isArray(value)) {
    return h('ul', {}, ...value.map((v) => h('li', {}, typeof v === 'object' && v !== null ? renderSheet(v, depth + 1) : String(v))));
  }
  if (typeof value === 'object' && value !== null) {
    const dl = h('dl', { class: 'facts sheet' });
    for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
      if (v === null || v === undefined || k === 'id' || k.endsWith('Id')) continue;
      dl.append(h('dt', {}, humanise(k)), h('dd', {}, typeof v === 'object' ? renderSheet(v, depth + 1) : typeof v === 'number' ? String(Number(v.toFixed(3))) : String(v)));
    }
    return dl;
  }
  return h('span', {}, String(value));
}
