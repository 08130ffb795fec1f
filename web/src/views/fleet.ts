// Fleet table: every node with its predicted status and best link; sortable
// by any column, filterable by status, each row linked to the map.
import type { Route } from '../router.ts';
import { getGatewayChecks } from '../api-gateways.ts';
import { planHash } from '../router.ts';
import { PlanStore } from '../plan-store.ts';
import { clear, db, fmt, h, metres, notice, percent } from '../ui.ts';
import { nodeSymbolSvg, statusStyle, symbolElement, type NodeClass } from '../symbols.ts';
import { getCapacity } from '../api-capacity.ts';

interface Row {
  id: string;
  name: string;
  status: NodeClass;
  gateway: string;
  marginDb: number | null;
  bestSf: number | null;
  toaMs: number | null;
  delivery: number | null;
  /** Delivery ratio with collisions and duty-cycle budget (GET /capacity, capture model); null until known. */
  deliveryLoad: number | null;
  heard: number | null;
  legal: string;
  device: string;
  heightM: number | null;
}

type Key = keyof Row;
const statusOrder: Record<NodeClass, number> = { unserved: 0, marginal: 1, served: 2, unknown: 3 };

const columns: Array<{ key: Key; label: string; numeric?: boolean }> = [
  { key: 'name', label: 'Node' },
  { key: 'status', label: 'Status' },
  { key: 'gateway', label: 'Best gateway' },
  { key: 'marginDb', label: 'Margin (dB)', numeric: true },
  { key: 'bestSf', label: 'Best SF', numeric: true },
  { key: 'toaMs', label: 'Time on air (ms)', numeric: true },
  { key: 'delivery', label: 'Delivery', numeric: true },
  { key: 'deliveryLoad', label: 'Delivery with network load', numeric: true },
  { key: 'heard', label: 'Heard by (gateways, margin ≥ 0 dB)', numeric: true },
  { key: 'legal', label: 'Power legal' },
  { key: 'device', label: 'Device' },
  { key: 'heightM', label: 'Antenna height (m)', numeric: true },
];

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

export async function renderFleet(main: HTMLElement, route: Route): Promise<void> {
  const planId = route.planId as string;
  const store = new PlanStore(planId);
  await store.load();
  main.append(h('h1', {}, `Fleet table · ${store.plan.name}`));
  if (store.fleetProblem) main.append(notice('info', `Statuses are missing: ${store.fleetProblem}.`));

  const rows: Row[] = store.nodes.map((n) => {
    const f = store.fleet.get(n.id);
    const gw = f?.bestGatewayName ?? f?.bestGatewayId ?? '';
    return {
      id: n.id,
      name: n.name,
      status: f?.status ?? 'unknown',
      gateway: gw ?? '',
      marginDb: num(f?.bestMarginDb),
      bestSf: num(f?.bestSf),
      toaMs: num(f?.timeOnAirMs),
      delivery: num(f?.combinedDeliveryProbability),
      deliveryLoad: null,
      heard: num(f?.gatewaysHeard),
      legal: f ? (f.legal ? 'yes' : 'NO') : '–',
      device: n.deviceType,
      heightM: num(n.antennaHeightAglM),
    };
  });

  let sortKey: Key = 'status';
  let ascending = true;
  const filter = h('select', { id: 'fleet-filter' });
  for (const [value, label] of [
    ['', 'all statuses'],
    ['served', 'served'],
    ['marginal', 'marginal'],
    ['unserved', 'unserved'],
    ['unknown', 'not predicted'],
  ]) {
    filter.append(h('option', { value }, label));
  }
  if (route.params.get('status')) filter.value = route.params.get('status') ?? '';
  const search = h('input', { type: 'search', id: 'fleet-search', placeholder: 'name or device' });
  const countLine = h('p', { id: 'fleet-count', 'aria-live': 'polite' });
  const table = h('table', { class: 'data-table', id: 'fleet-table' });
  main.append(
    h(
      'div',
      { class: 'toolbar' },
      h('label', { for: 'fleet-filter' }, 'Status '),
      filter,
      h('label', { for: 'fleet-search' }, ' Search '),
      search,
    ),
    countLine,
    h('div', { class: 'table-scroll' }, table),
  );

  const compare = (a: Row, b: Row): number => {
    const va = a[sortKey];
    const vb = b[sortKey];
    let c: number;
    if (sortKey === 'status') c = statusOrder[a.status] - statusOrder[b.status];
    else if (va === null || va === undefined) c = vb === null || vb === undefined ? 0 : 1;
    else if (vb === null || vb === undefined) c = -1;
    else if (typeof va === 'number' && typeof vb === 'number') c = va - vb;
    else c = String(va).localeCompare(String(vb), undefined, { numeric: true });
    if (c === 0) c = a.name.localeCompare(b.name, undefined, { numeric: true });
    return ascending ? c : -c;
  };

  const draw = (): void => {
    clear(table);
    const q = search.value.trim().toLowerCase();
    const shown = rows
      .filter((r) => !filter.value || r.status === filter.value)
      .filter((r) => !q || r.name.toLowerCase().includes(q) || r.device.toLowerCase().includes(q))
      .sort(compare);
    const c = { served: 0, marginal: 0, unserved: 0, unknown: 0 };
    for (const r of rows) c[r.status] += 1;
    countLine.textContent = `Showing ${shown.length} of ${rows.length} nodes (${c.served} served, ${c.marginal} marginal, ${c.unserved} unserved${c.unknown ? `, ${c.unknown} not predicted` : ''}).`;
    table.append(h('caption', { class: 'visually-hidden' }, 'Nodes of the plan with their predicted status; the column buttons sort the table'));
    const head = h('tr', {});
    for (const col of columns) {
      const active = col.key === sortKey;
      const button = h(
        'button',
        {
          type: 'button',
          class: 'sort-button',
          onclick: () => {
            if (sortKey === col.key) ascending = !ascending;
            else {
              sortKey = col.key;
              ascending = true;
            }
            draw();
          },
        },
        col.label,
        active ? (ascending ? ' ▲' : ' ▼') : '',
      );
      head.append(h('th', { scope: 'col', 'aria-sort': active ? (ascending ? 'ascending' : 'descending') : 'none', class: col.numeric ? 'num' : '' }, button));
    }
    head.append(h('th', { scope: 'col' }, 'Map'));
    table.append(h('thead', {}, head));
    const body = h('tbody', {});
    for (const r of shown) {
      body.append(
        h(
          'tr',
          { 'data-node-id': r.id },
          h('th', { scope: 'row' }, r.name),
          h('td', {}, symbolElement(nodeSymbolSvg(r.status, 14), ''), ` ${r.status === 'unknown' ? 'not predicted' : r.status}`),
          h('td', {}, r.gateway || '–'),
          h('td', { class: r.marginDb !== null && r.marginDb < 0 ? 'num neg' : 'num' }, db(r.marginDb)),
          h('td', { class: 'num' }, r.bestSf ? `SF${r.bestSf}` : '–'),
          h('td', { class: 'num' }, fmt(r.toaMs, 'ms', 0)),
          h('td', { class: 'num' }, percent(r.delivery)),
          h('td', { class: 'num', 'data-col': 'delivery-load' }, percent(r.deliveryLoad)),
          h('td', { class: 'num' }, r.heard === null ? '–' : String(r.heard)),
          h('td', {}, r.legal),
          h('td', {}, r.device),
          h('td', { class: 'num' }, metres(r.heightM)),
          h('td', {}, h('a', { href: planHash(planId, `?node=${encodeURIComponent(r.id)}`), 'aria-label': `Show ${r.name} on the map` }, 'Show on map')),
        ),
      );
    }
    table.append(body);
  };
  filter.addEventListener('change', draw);
  search.addEventListener('input', draw);
  draw();
  // The delivery ratio with collisions comes from the capacity route; the table is usable before it arrives.
  const loadNote = h('p', { class: 'muted small', id: 'fleet-load-note' }, 'Delivery with network load: computing…');
  countLine.after(loadNote);
  getCapacity(planId, { model: 'capture' })
    .then((capacity) => {
      const byId = new Map(capacity.nodes.map((n) => [n.nodeId, n.deliveryRatio]));
      for (const r of rows) r.deliveryLoad = byId.get(r.id) ?? null;
      loadNote.textContent = `“Delivery” is the link-only figure; “with network load” also counts collisions (capture model) and duty-cycle budgets at the planned reporting rates (${capacity.totals.overBudgetNodes} node(s) over budget).`;
      draw();
    })
    .catch((err: unknown) => {
      loadNote.textContent = `Delivery with network load is not available: ${err instanceof Error ? err.message : String(err)}.`;
    });
  main.append(
    h('ul', { class: 'status-key inline' }, ...(Object.keys(statusStyle) as NodeClass[]).map((c) => h('li', {}, symbolElement(nodeSymbolSvg(c, 14), ''), statusStyle[c].label))),
  );
  // Gateways are checked by the same legal rule as nodes.
  const gatewayBox = h('section', { class: 'card', id: 'fleet-gateways', 'aria-labelledby': 'fleet-gateways-h' }, h('h2', { id: 'fleet-gateways-h' }, 'Gateways: radiated power'));
  main.append(gatewayBox);
  void getGatewayChecks(planId)
    .then(({ items }) => {
      const rows = items.map((g) =>
        h(
          'tr',
          { class: g.legal.withinLimit ? '' : 'row-warn' },
          h('th', { scope: 'row' }, g.name),
          h('td', { class: 'num' }, fmt(g.txPowerDbm, 'dBm')),
          h('td', {}, `${g.antennaName} (${fmt(g.antennaGainDbi, 'dBi')})`),
          h('td', { class: 'num' }, fmt(g.antennaHeightAglM, 'm')),
          h('td', { class: 'num' }, fmt(g.peakEirpDbm, 'dBm')),
          h('td', { class: 'num' }, g.legal.maxEirpDbm === null ? '–' : fmt(g.legal.maxEirpDbm, 'dBm')),
          h('td', {}, g.legal.withinLimit ? 'yes' : `NO, ${fmt(g.legal.excessDb, 'dB')} over`),
        ),
      );
      gatewayBox.append(
        h(
          'div',
          { class: 'table-scroll' },
          h(
            'table',
            { class: 'data-table' },
            h('thead', {}, h('tr', {}, ...['Gateway', 'Power', 'Antenna', 'Height', 'Peak EIRP', 'Limit', 'Power legal'].map((t) => h('th', { scope: 'col' }, t)))),
            h('tbody', {}, ...rows),
          ),
        ),
      );
    })
    .catch((err: unknown) => gatewayBox.append(notice('error', `Gateway check: ${err instanceof Error ? err.message : String(err)}`)));
}
