// Installer mode: a narrow, phone-sized layout for one node. Where it is
// (coordinates), what to bring and how high to mount it (visit sheet), what
// the gateway should hear, the safety cautions, and a form to record the
// RSSI/SNR actually measured (shown beside the prediction), and the node's
// install status (planned / installed / needs a visit; installers may set it).
import { getVisitSheet, postReading, visitSheetUrl, type FleetNode, type VisitSheet } from '../api.ts';
import { explainWriteError, PlanStore } from '../plan-store.ts';
import type { Route } from '../router.ts';
import { planHash } from '../router.ts';
import { canRecordReadings } from '../session.ts';
import { cautionGroups } from './gateway-check.ts';
import { announce, cautionsBlock, coords, db, dbm, distance, errorText, field, h, metres, money, notice, percent, select } from '../ui.ts';
import { nodeSymbolSvg, statusStyle, symbolElement } from '../symbols.ts';
import { kitLabel } from './node-panel.ts';
import { tuningPanel } from './tuning-panel.ts';
import { offlineCard, outboxPanel } from './offline-panel.ts';
import { isNetworkFailure, queueInstallStatus, queueReading } from '../offline/device.ts';

export async function renderInstaller(main: HTMLElement, route: Route): Promise<void> {
  main.classList.add('narrow');
  main.append(outboxPanel());
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
  const delivery = store.fleet.get(node.id)?.combinedDeliveryProbability;
  main.append(
    h('p', {}, h('a', { href: planHash(store.planId, '/install') }, '← all nodes')),
    h('h1', {}, symbolElement(nodeSymbolSvg(status, 20), ''), ` ${node.name}`),
    h('p', { class: `status-line status-${status}` }, statusStyle[status].label, delivery !== undefined ? ` · delivery ${percent(delivery)}` : ''),
    h('p', { class: 'muted small', id: 'install-status-line' }, statusLine(node)),
  );
  renderInstallStatus(main, store, node);
  main.append(offlineCard(store.planId, node));

  // where
  const copy = h('button', { type: 'button', onclick: () => void navigator.clipboard?.writeText(`${node.lat.toFixed(6)}, ${node.lon.toFixed(6)}`).then(() => announce('Coordinates copied')) }, 'Copy coordinates');
  main.append(
    h(
      'section',
      { class: 'card', 'aria-labelledby': 'where-h' },
      h('h2', { id: 'where-h' }, 'Where'),
      h('p', { class: 'big-coords', id: 'install-coords' }, coords(node.lat, node.lon)),
      h('p', { class: 'muted small' }, `Decimal: ${node.lat.toFixed(6)}, ${node.lon.toFixed(6)} (WGS84)`),
      h('div', { class: 'button-row' }, copy, h('a', { class: 'button', href: `geo:${node.lat.toFixed(6)},${node.lon.toFixed(6)}` }, 'Open in a maps app')),
      node.notes ? h('p', {}, h('strong', {}, 'Access notes: '), node.notes) : null,
    ),
  );
  // The visit sheet can take a moment (it may search the kit catalog): the form is usable meanwhile.
  const sheetBox = h('div', { id: 'visit-sheet', 'aria-busy': 'true' }, h('p', { class: 'muted' }, 'Loading the visit sheet…'));
  main.append(sheetBox, h('p', {}, h('a', { href: visitSheetUrl(store.planId, node.id), target: '_blank', rel: 'noopener', id: 'visit-sheet-link' }, 'Open the printable visit sheet')));
  const form = renderReadingForm(main, store, node);
  try {
    const sheet = await getVisitSheet(store.planId, node.id);
    sheetBox.replaceChildren();
    renderSheet(sheetBox, store, sheet);
    form?.useSheet(sheet);
    main.append(tuningPanel(store.planId, node.id, sheet.buildSheet?.design ?? null, store.plan.bandPlanId));
  } catch (err) {
    sheetBox.replaceChildren(notice('info', `Visit sheet: ${errorText(err)}.`), cautionsBlock());
  } finally {
    sheetBox.removeAttribute('aria-busy');
  }
}

const installStatusLabels: Record<NonNullable<FleetNode['installStatus']>, string> = {
  planned: 'planned (not installed yet)',
  installed: 'installed',
  'needs-visit': 'needs a visit',
};

function statusLine(node: FleetNode): string {
  return `${node.deviceType} · ${node.environment ?? 'outdoor'} · install status: ${node.installStatus ?? 'planned'}`;
}

/** Install status: planners and installers set it here (PATCH installStatus with the version read). */
function renderInstallStatus(main: HTMLElement, store: PlanStore, node: FleetNode): void {
  if (!canRecordReadings()) return; // viewers read the status line above
  const choice = select(
    (Object.keys(installStatusLabels) as Array<keyof typeof installStatusLabels>).map((value) => ({ value, label: installStatusLabels[value] })),
    node.installStatus ?? 'planned',
    { id: 'install-status' },
  );
  const result = h('p', { id: 'install-status-result', 'aria-live': 'polite' });
  const save = h('button', { type: 'button', id: 'install-status-save', class: 'primary' }, 'Save install status');
  save.addEventListener('click', () => {
    save.disabled = true;
    result.textContent = 'Saving…';
    // No connection: the change waits on this device; the server's version check decides when it is sent.
    const queue = () =>
      queueInstallStatus(store.planId, node, choice.value).then(() => {
        result.textContent = `Not yet sent: install status ${installStatusLabels[choice.value as keyof typeof installStatusLabels]} is saved on this device and is sent when the connection returns (its state is in the list at the top).`;
        save.disabled = false;
      });
    if (!navigator.onLine) {
      void queue();
      return;
    }
    void store
      .update('nodes', node.id, { installStatus: choice.value }, false, `set the install status of ${node.name}`)
      .then((updated) => {
        const saved = updated as FleetNode;
        result.textContent = `Saved: install status is now ${installStatusLabels[saved.installStatus ?? 'planned']}.`;
        const line = document.getElementById('install-status-line');
        if (line) line.textContent = statusLine(saved);
        announce(result.textContent);
      })
      .catch((err: unknown) => {
        if (isNetworkFailure(err)) return queue();
        result.textContent = explainWriteError(err, store, `node ${node.name}`);
      })
      .finally(() => {
        save.disabled = false;
      });
  });
  main.append(
    h(
      'section',
      { class: 'card', 'aria-labelledby': 'install-status-h' },
      h('h2', { id: 'install-status-h' }, 'Install status'),
      field('Install status of this node', choice),
      h('div', { class: 'button-row' }, save),
      result,
    ),
  );
}

function renderSheet(main: HTMLElement, store: PlanStore, sheet: VisitSheet): void {
  const k = sheet.kit;
  const kit = h(
    'section',
    { class: 'card', 'aria-labelledby': 'kit-h' },
    h('h2', { id: 'kit-h' }, 'What to bring and how high'),
    h(
      'dl',
      { class: 'facts' },
      h('dt', {}, 'Antenna'),
      h('dd', {}, `${k.antenna.name}${k.antenna.homemade ? ' (home-made: build sheet below)' : ''}`),
      h('dt', {}, 'Mount at'),
      h('dd', { id: 'install-height' }, `${metres(k.antennaHeightAglM)} above ground`),
      h('dt', {}, 'Feedline'),
      h('dd', {}, k.feedline ? `${k.feedline.name}, ${metres(k.feedline.lengthM)}` : 'none (radio at the antenna)'),
      k.mastName ? h('dt', {}, 'Mast or mount') : null,
      k.mastName ? h('dd', {}, k.mastName) : null,
      k.price ? h('dt', {}, 'Kit cost') : null,
      k.price ? h('dd', { id: 'install-kit-cost' }, money(k.price.totalUsd)) : null,
    ),
    k.price ? h('ul', { class: 'price-lines small' }, ...k.price.lines.map((l) => h('li', {}, `${l.name}${l.unit === 'm' ? `, ${metres(l.quantity)}` : l.quantity > 1 ? ` × ${l.quantity}` : ''}: ${money(l.costUsd)}`))) : null,
  );
  if (k.recommended) {
    kit.append(
      notice(
        'warn',
        `This kit does not meet the target. Recommended instead: ${kitLabel(store, { antennaDesignId: k.recommended.antennaDesignId, mastHeightM: k.recommended.mastHeightM, feedlineId: k.recommended.feedlineId, feedlineLengthM: k.recommended.feedlineLengthM })}${k.recommended.mastName ? ` on ${k.recommended.mastName}` : ''} (`,
        h('span', { id: 'install-rec-cost' }, money(k.recommended.price?.totalUsd ?? k.recommended.cost)),
        `). ${k.recommended.reason}`,
      ),
    );
  }
  main.append(kit);

  const gw = h('section', { class: 'card', 'aria-labelledby': 'exp-h' }, h('h2', { id: 'exp-h' }, 'What the gateways should hear'));
  if (sheet.gateways.length === 0) gw.append(notice('warn', 'No gateway is within range of this node.'));
  for (const g of sheet.gateways) {
    gw.append(
      h('h3', {}, g.name),
      h(
        'dl',
        { class: 'facts' },
        h('dt', {}, 'Distance'),
        h('dd', {}, distance(g.distanceM)),
        h('dt', {}, 'Aim antenna'),
        h('dd', {}, `${g.aimAzimuthDeg.toFixed(0)}° from true north, ${g.elevationDeg.toFixed(1)}° elevation`),
        h('dt', {}, 'RSSI'),
        h('dd', {}, `${g.expectedRssiDbm.p10.toFixed(1)} to ${g.expectedRssiDbm.p90.toFixed(1)} dBm (median ${g.expectedRssiDbm.p50.toFixed(1)})`),
        h('dt', {}, 'SNR'),
        h('dd', {}, `${g.expectedSnrDb.p10.toFixed(1)} to ${g.expectedSnrDb.p90.toFixed(1)} dB at SF${g.sf}`),
        h('dt', {}, 'Margin'),
        h('dd', {}, db(g.marginDb)),
      ),
    );
  }
  gw.append(h('p', { class: 'muted small' }, 'Ranges are the 10th to 90th percentile of the prediction.'));
  main.append(gw);

  if (sheet.buildSheet) {
    const b = sheet.buildSheet;
    main.append(
      h(
        'section',
        { class: 'card', 'aria-labelledby': 'build-h' },
        h('h2', { id: 'build-h' }, `Build sheet: ${b.designName} at ${b.frequencyMhz.toFixed(1)} MHz`),
        h(
          'div',
          { class: 'table-scroll' },
          h(
          'table',
          { class: 'data-table compact' },
          h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Element'), h('th', { scope: 'col' }, 'Count'), h('th', { scope: 'col' }, 'Length'))),
          h('tbody', {}, ...b.elements.map((e) => h('tr', {}, h('td', {}, e.name, e.note ? h('span', { class: 'muted small' }, ` (${e.note})`) : ''), h('td', { class: 'num' }, String(e.count)), h('td', { class: 'num' }, `${e.lengthMm.toFixed(1)} mm (${e.lengthIn.toFixed(2)} in)`)))),
          ),
        ),
        h('ul', {}, ...b.notes.map((n) => h('li', {}, n))),
        b.cautions.length ? notice('warn', b.cautions.join(' ')) : '',
      ),
    );
  }
  if (sheet.warnings.length) main.append(notice('info', sheet.warnings.join(' ')));
  // Fitted to this node's job (a 1 m soil probe gets no mast list); older servers: the general list.
  main.append(sheet.fittedCautions ? cautionGroups(sheet.fittedCautions, sheet.cautionsFooter ?? '', 'install-cautions', '⚠ Cautions for this visit') : cautionsBlock(sheet.cautions));
}

function renderReadingForm(main: HTMLElement, store: PlanStore, node: FleetNode): { useSheet(sheet: VisitSheet): void } | null {
  const form = h('form', { class: 'card reading-form', id: 'reading-form', 'aria-labelledby': 'reading-h' });
  form.append(h('h2', { id: 'reading-h' }, 'Record what you measured'));
  if (!canRecordReadings()) {
    form.append(h('p', { class: 'muted' }, 'Your role (viewer) cannot record readings.'));
    main.append(form);
    return null;
  }
  const gateway = select(
    store.gateways.map((g) => ({ value: g.id, label: g.name })),
    store.gateways[0]?.id,
    { id: 'reading-gateway', required: true },
  );
  const rssi = h('input', { id: 'reading-rssi', type: 'number', step: '0.1', min: '-200', max: '30', required: true, inputmode: 'decimal' });
  const snr = h('input', { id: 'reading-snr', type: 'number', step: '0.1', min: '-40', max: '40', required: true, inputmode: 'decimal' });
  const sf = select(
    [7, 8, 9, 10, 11, 12].map((v) => ({ value: String(v), label: `SF${v}` })),
    '10',
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
    if (rssi.value === '' || snr.value === '' || !Number.isFinite(rssiDbm) || !Number.isFinite(snrDb)) {
      out.replaceChildren(notice('error', 'Enter RSSI in dBm and SNR in dB as numbers.'));
      return;
    }
    out.replaceChildren(h('p', {}, 'Saving…'));
    const reading = {
      nodeId: node.id,
      gatewayId: gateway.value,
      rssiDbm,
      snrDb,
      sf: Number(sf.value),
      measuredAt: new Date(when.value).toISOString(),
      note: note.value || undefined,
    };
    // No connection: the reading waits on this device ("not yet sent") and goes when the connection returns.
    const queue = () =>
      queueReading(store.planId, node, reading, `reading RSSI ${dbm(rssiDbm)}, SNR ${db(snrDb)} at SF${sf.value}`).then(() => {
        out.replaceChildren(notice('info', h('span', { id: 'reading-queued' }, `Not yet sent: the reading (RSSI ${dbm(rssiDbm)}, SNR ${db(snrDb)}) is saved on this device and is sent when the connection returns (its state is in the list at the top).`)));
        rssi.value = '';
        snr.value = '';
      });
    if (!navigator.onLine) {
      void queue();
      return;
    }
    void postReading(store.planId, reading)
      .then(({ items }) => {
        const saved = items[0];
        const compare =
          saved && saved.predictedRssiDbm !== null
            ? ` Predicted RSSI ${dbm(saved.predictedRssiDbm)}, SNR ${db(saved.predictedSnrDb)}; measured − predicted: ${db(saved.rssiDifferenceDb)} RSSI, ${db(saved.snrDifferenceDb)} SNR.`
            : ' No prediction to compare with.';
        out.replaceChildren(notice('ok', h('span', { id: 'reading-saved' }, `Reading saved: RSSI ${dbm(rssiDbm)}, SNR ${db(snrDb)} at SF${sf.value}.`, compare)));
        announce('Reading saved');
        rssi.value = '';
        snr.value = '';
      })
      .catch((err: unknown) => (isNetworkFailure(err) ? queue() : out.replaceChildren(notice('error', explainWriteError(err, store, 'the reading')))));
  });
  main.append(form);
  let touched = false;
  gateway.addEventListener('change', () => (touched = true));
  sf.addEventListener('change', () => (touched = true));
  return {
    // Preselect the gateway the sheet expects to hear the node best, and its SF.
    useSheet(sheet: VisitSheet) {
      const best = sheet.gateways[0];
      if (!best || touched) return;
      gateway.value = best.id;
      sf.value = String(best.sf);
    },
  };
}
