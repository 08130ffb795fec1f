// Manager view: the plan on one page. Share of nodes served / marginal /
// unserved, redundancy (how many gateways hear each node with margin), the
// kit cost as the server prices it (GET /bom), and the latest coverage run's summary.
import { listCoverage, runState, type CoverageRun } from '../api.ts';
import { PlanStore } from '../plan-store.ts';
import type { Route } from '../router.ts';
import { planHash } from '../router.ts';
import { append, errorText, h, notice, percent } from '../ui.ts';
import { downloadPlanFile, getBillOfMaterials, type PlanFile } from '../api-reports.ts';
import { nodeSymbolSvg, statusStyle, symbolElement, type NodeClass } from '../symbols.ts';
import { getCapacity } from '../api-capacity.ts';

/** The server-made PDF report and the exports (web/src/api-reports.ts). */
function reportButtons(planId: string): HTMLElement {
  const status = h('span', { class: 'muted small', 'aria-live': 'polite', id: 'report-status' });
  const button = (file: PlanFile, label: string, id: string) => {
    const b = h('button', { type: 'button', id }, label);
    b.addEventListener('click', async () => {
      b.setAttribute('disabled', '');
      status.textContent = file === 'report.pdf' ? 'Making the report… (a large plan takes a while)' : 'Preparing the file…';
      try {
        status.textContent = `Downloaded ${await downloadPlanFile(planId, file)}.`;
      } catch (err) {
        status.textContent = `Failed: ${errorText(err)}`;
      } finally {
        b.removeAttribute('disabled');
      }
    });
    return b;
  };
  return h(
    'span',
    { class: 'report-buttons' },
    button('report.pdf', 'Report (PDF)', 'summary-report'),
    button('export.geojson', 'GeoJSON', 'summary-geojson'),
    button('export.kml', 'KML', 'summary-kml'),
    button('export.csv', 'Fleet CSV', 'summary-csv'),
    button('bom.csv', 'Bill of materials CSV', 'summary-bom'),
    status,
  );
}

const usd = (v: number): string => `${v.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 })} USD`;

export async function renderSummary(main: HTMLElement, route: Route): Promise<void> {
  const planId = route.planId as string;
  const store = new PlanStore(planId);
  await store.load();
  main.append(
    h(
      'div',
      { class: 'summary-head' },
      h('h1', {}, `Plan summary · ${store.plan.name}`),
      h('button', { type: 'button', onclick: () => window.print() }, 'Print'),
      reportButtons(planId),
    ),
    h('p', { class: 'muted' }, `Target margin ${store.plan.targetMarginDb ?? '–'} dB · band plan ${store.plan.bandPlanId ?? '–'} · ${store.nodes.length} nodes · ${store.gateways.length} gateways · ${store.sites.length} candidate sites`),
  );
  if (store.fleetProblem) main.append(notice('info', `Link statuses are missing: ${store.fleetProblem}.`));

  // service shares
  const counts: Record<NodeClass, number> = { served: 0, marginal: 0, unserved: 0, unknown: 0 };
  for (const n of store.nodes) counts[store.fleet.get(n.id)?.status ?? 'unknown'] += 1;
  const total = Math.max(1, store.nodes.length);
  const bar = h('div', { class: 'share-bar', role: 'img', 'aria-label': (Object.keys(counts) as NodeClass[]).map((c) => `${c} ${counts[c]}`).join(', ') });
  for (const c of Object.keys(counts) as NodeClass[]) {
    if (counts[c] === 0) continue;
    bar.append(h('span', { class: `share share-${c}`, style: `flex-grow:${counts[c]}` }, `${Math.round((counts[c] / total) * 100)} %`));
  }
  main.append(
    h(
      'section',
      { class: 'card', 'aria-labelledby': 'share-h', id: 'summary-shares' },
      h('h2', { id: 'share-h' }, 'Nodes heard with margin'),
      bar,
      h(
        'table',
        { class: 'data-table compact' },
        h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Status'), h('th', { scope: 'col' }, 'Nodes'), h('th', { scope: 'col' }, 'Share'))),
        h(
          'tbody',
          {},
          ...(Object.keys(counts) as NodeClass[]).map((c) =>
            h(
              'tr',
              {},
              h('th', { scope: 'row' }, symbolElement(nodeSymbolSvg(c, 14), ''), ` ${statusStyle[c].label}`),
              h('td', { class: 'num' }, h('a', { href: planHash(planId, `/fleet?status=${c}`) }, String(counts[c]))),
              h('td', { class: 'num' }, percent(counts[c] / total)),
            ),
          ),
        ),
      ),
    ),
  );

  // redundancy
  const heard = new Map<string, number>();
  let known = 0;
  for (const n of store.nodes) {
    const k = store.fleet.get(n.id)?.gatewaysHeard;
    if (typeof k !== 'number') continue;
    known += 1;
    const label = k >= 3 ? '3 or more' : String(k);
    heard.set(label, (heard.get(label) ?? 0) + 1);
  }
  const redundancy = h('section', { class: 'card', 'aria-labelledby': 'red-h', id: 'summary-redundancy' }, h('h2', { id: 'red-h' }, 'Redundancy'));
  if (known === 0) redundancy.append(h('p', { class: 'muted' }, 'Not available: the fleet table does not report how many gateways hear each node.'));
  else
    redundancy.append(
      h('p', {}, 'How many gateways hear each node (margin ≥ 0 dB at the SF it uses):'),
      h(
        'table',
        { class: 'data-table compact' },
        h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Gateways'), h('th', { scope: 'col' }, 'Nodes'), h('th', { scope: 'col' }, 'Share'))),
        h(
          'tbody',
          {},
          ...['0', '1', '2', '3 or more'].map((label) =>
            h('tr', {}, h('th', { scope: 'row' }, label), h('td', { class: 'num' }, String(heard.get(label) ?? 0)), h('td', { class: 'num' }, percent((heard.get(label) ?? 0) / known))),
          ),
        ),
      ),
    );
  main.append(redundancy);

  // delivery with network load (collisions, duty-cycle budgets) beside the link-only figure
  const load = h('section', { class: 'card', 'aria-labelledby': 'load-h', id: 'summary-load' }, h('h2', { id: 'load-h' }, 'Delivery with network load'), h('p', { class: 'muted' }, 'Computing…'));
  main.append(load);
  void getCapacity(planId, { model: 'capture' })
    .then((capacity) => {
      load.replaceChildren(
        h('h2', { id: 'load-h' }, 'Delivery with network load'),
        h(
          'table',
          { class: 'data-table compact' },
          h(
            'tbody',
            {},
            h('tr', {}, h('th', { scope: 'row' }, 'Mean delivery, link only'), h('td', { class: 'num' }, percent(capacity.totals.meanLinkDeliveryProbability))),
            h('tr', {}, h('th', { scope: 'row' }, 'Mean delivery with collisions and budgets'), h('td', { class: 'num', id: 'summary-delivery-load' }, percent(capacity.totals.meanDeliveryRatio))),
            h('tr', {}, h('th', { scope: 'row' }, 'Nodes over their airtime budget'), h('td', { class: 'num' }, String(capacity.totals.overBudgetNodes))),
          ),
        ),
        h('p', { class: 'muted small' }, 'Capture model at the planned reporting rates. ', h('a', { href: planHash(planId, '/capacity') }, 'Network load per gateway'), '.'),
      );
    })
    .catch((err: unknown) => {
      load.replaceChildren(h('h2', { id: 'load-h' }, 'Delivery with network load'), h('p', { class: 'muted' }, `Not available: ${err instanceof Error ? err.message : String(err)}.`));
    });

  // kit cost as the server prices it (GET /plans/{id}/bom: the report's and bom.csv's one kit price)
  const cost = h('section', { class: 'card', 'aria-labelledby': 'cost-h', id: 'summary-cost' }, h('h2', { id: 'cost-h' }, 'Kit cost (catalog prices)'), h('p', { class: 'muted' }, 'Pricing…'));
  main.append(cost);
  try {
    const bom = await getBillOfMaterials(planId);
    const t = bom.totalsUsd;
    append(
      cost,
      h(
        'table',
        { class: 'data-table compact' },
        h(
          'tbody',
          {},
          h('tr', {}, h('th', { scope: 'row' }, 'Antennas'), h('td', { class: 'num' }, usd(t.antenna))),
          h('tr', {}, h('th', { scope: 'row' }, 'Feedlines'), h('td', { class: 'num' }, usd(t.feedline))),
          h('tr', {}, h('th', { scope: 'row' }, 'Connectors and surge arrestors'), h('td', { class: 'num' }, usd(t.connector))),
          h('tr', {}, h('th', { scope: 'row' }, 'Masts'), h('td', { class: 'num' }, usd(t.mast))),
          h('tr', { class: 'total' }, h('th', { scope: 'row' }, 'Kit cost (nodes and gateways)'), h('td', { class: 'num', id: 'summary-cost-total' }, usd(bom.kitCostUsd))),
          h('tr', {}, h('th', { scope: 'row' }, 'Gateway radios and site works'), h('td', { class: 'num' }, usd(t.gateway + t.site))),
          h('tr', {}, h('th', { scope: 'row' }, 'Bill of materials total'), h('td', { class: 'num', id: 'summary-bom-total' }, usd(bom.totalUsd))),
        ),
      ),
      bom.unpriced.length ? h('p', { class: 'muted small' }, `Not priced (not in the catalog): ${bom.unpriced.join(', ')}.`) : null,
      h('p', { class: 'muted small' }, 'The same prices as the report and the bill of materials CSV; labour is not included.'),
    );
    cost.querySelector('p.muted')?.remove();
  } catch (err) {
    cost.replaceChildren(h('h2', { id: 'cost-h' }, 'Kit cost (catalog prices)'), h('p', { class: 'muted' }, `Not available: ${errorText(err)}.`));
  }

  // latest coverage
  const coverage = h('section', { class: 'card', 'aria-labelledby': 'cov-h' }, h('h2', { id: 'cov-h' }, 'Latest coverage run'));
  main.append(coverage);
  try {
    const runs = await listCoverage(planId);
    const done: CoverageRun | undefined = runs.find((r) => runState(r) === 'done');
    if (!done || !done.summary) coverage.append(h('p', { class: 'muted' }, 'No finished coverage run yet. Start one from the map.'));
    else {
      const sm = done.summary;
      append(
        coverage,
        h('p', {}, `${done.mode ?? ''} run over ${done.gatewayIds.length} gateway(s), ${done.radiusKm ?? '–'} km, SF${done.sf ?? '–'}, margin ≥ ${done.targetMarginDb ?? '–'} dB; finished ${done.finishedAt ? new Date(done.finishedAt).toLocaleString() : ''}.`),
        h(
          'table',
          { class: 'data-table compact' },
          h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Area'), h('th', { scope: 'col' }, 'km²'), h('th', { scope: 'col' }, 'Share'))),
          h(
            'tbody',
            {},
            ...(['served', 'marginal', 'unserved'] as const).map((k) => h('tr', {}, h('th', { scope: 'row' }, k), h('td', { class: 'num' }, sm[k].areaKm2.toFixed(2)), h('td', { class: 'num' }, percent(sm[k].share)))),
          ),
        ),
        sm.gateways.length > 1 ? h('p', {}, 'Nodes per best gateway: ', sm.gateways.map((g) => `${g.name} ${g.nodes}`).join(', '), '.') : null,
      );
    }
  } catch {
    coverage.append(h('p', { class: 'muted' }, 'Coverage runs are not available on this server yet.'));
  }
}
