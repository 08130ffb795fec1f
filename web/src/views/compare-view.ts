// Scenarios side by side: this plan (A) against another plan of the team (B),
// e.g. a copy with one more gateway. Counts, redundancy, cost and risks in one
// table with the change, then the nodes whose status or margin changed.
// A copy of this plan can be made here, and is compared at once.
import { listPlans, type Plan } from '../api.ts';
import { comparePlans, copyPlan, type PlanComparison, type ScenarioSide } from '../api-reports.ts';
import type { Route } from '../router.ts';
import { go, planHash } from '../router.ts';
import { clear, errorText, h, notice, percent } from '../ui.ts';
import { nodeSymbolSvg, statusStyle, symbolElement } from '../symbols.ts';

const usd = (v: number): string => `${v.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 })} USD`;
const signed = (v: number, unit: string, digits = 0) => `${v > 0 ? '+' : v < 0 ? '−' : '±'}${Math.abs(v).toFixed(digits)}${unit}`;

function figureRows(a: ScenarioSide, b: ScenarioSide): Array<[string, string, string, string]> {
  const row = (label: string, x: number, y: number, fmt: (v: number) => string, diff: (d: number) => string): [string, string, string, string] => [label, fmt(x), fmt(y), diff(y - x)];
  const n = (v: number) => String(v);
  const d = (v: number) => signed(v, '');
  return [
    row('Nodes', a.nodes, b.nodes, n, d),
    row('Served (target margin met)', a.counts.served, b.counts.served, n, d),
    row('Marginal (below target, still heard)', a.counts.marginal, b.counts.marginal, n, d),
    row('Unserved (not heard)', a.counts.unserved, b.counts.unserved, n, d),
    row('Share served', a.servedShare, b.servedShare, (v) => percent(v), (v) => signed(v * 100, ' %', 1)),
    row('Heard by 0 gateways', a.redundancy.none, b.redundancy.none, n, d),
    row('Heard by 1 gateway', a.redundancy.one, b.redundancy.one, n, d),
    row('Heard by 2 or more', a.redundancy.twoOrMore, b.redundancy.twoOrMore, n, d),
    row('Gateways', a.gateways, b.gateways, n, d),
    row('Kit cost (antennas, feedlines, masts)', a.kitCostUsd, b.kitCostUsd, usd, (v) => signed(v, ' USD', 2)),
    row('Bill of materials total', a.costUsd, b.costUsd, usd, (v) => signed(v, ' USD', 2)),
    row('Single-gateway nodes', a.risks.singleGateway, b.risks.singleGateway, n, d),
    row('Illegal configurations', a.risks.illegal, b.risks.illegal, n, d),
    row('Over the duty cycle', a.risks.overDutyCycle, b.risks.overDutyCycle, n, d),
  ];
}

function statusCell(status: PlanComparison['nodes'][number]['statusA']): HTMLElement {
  if (!status) return h('td', { class: 'muted' }, 'not in plan');
  return h('td', {}, symbolElement(nodeSymbolSvg(status, 14), ''), ` ${status}`);
}

function renderComparison(out: HTMLElement, result: PlanComparison, planId: string): void {
  clear(out);
  out.append(
    h(
      'section',
      { class: 'card', 'aria-labelledby': 'cmp-fig-h', id: 'compare-figures' },
      h('h2', { id: 'cmp-fig-h' }, 'Figures'),
      h(
        'table',
        { class: 'data-table compact' },
        h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Figure'), h('th', { scope: 'col', class: 'num' }, `A · ${result.a.name}`), h('th', { scope: 'col', class: 'num' }, `B · ${result.b.name}`), h('th', { scope: 'col', class: 'num' }, 'B − A'))),
        h('tbody', {}, ...figureRows(result.a, result.b).map(([label, x, y, diff]) => h('tr', {}, h('th', { scope: 'row' }, label), h('td', { class: 'num' }, x), h('td', { class: 'num' }, y), h('td', { class: 'num' }, diff)))),
      ),
    ),
  );
  const changed = result.nodes.filter((n) => n.statusA !== n.statusB || (n.marginChangeDb !== null && Math.abs(n.marginChangeDb) >= 1));
  const order: Record<string, number> = { unserved: 0, marginal: 1, served: 2 };
  changed.sort((x, y) => (order[x.statusB ?? 'unserved'] ?? 0) - (order[y.statusB ?? 'unserved'] ?? 0) || (x.marginChangeDb ?? 0) - (y.marginChangeDb ?? 0));
  const dec = (v: number | null) => (v === null ? '–' : `${v.toFixed(1)} dB`);
  out.append(
    h(
      'section',
      { class: 'card', 'aria-labelledby': 'cmp-nodes-h', id: 'compare-nodes' },
      h('h2', { id: 'cmp-nodes-h' }, `Nodes that change (${changed.length} of ${result.nodes.length})`),
      h('p', { class: 'muted small' }, `Status differs, or the best margin moves by 1 dB or more. Nodes are paired by ${result.matching}.`),
      changed.length === 0
        ? h('p', {}, 'No node changes status or margin by 1 dB or more.')
        : h(
            'div',
            { class: 'table-scroll' },
            h(
              'table',
              { class: 'data-table compact' },
              h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Node'), h('th', { scope: 'col' }, 'Status A'), h('th', { scope: 'col' }, 'Status B'), h('th', { scope: 'col', class: 'num' }, 'Margin A'), h('th', { scope: 'col', class: 'num' }, 'Margin B'), h('th', { scope: 'col', class: 'num' }, 'Change'))),
              h(
                'tbody',
                {},
                ...changed.map((n) =>
                  h(
                    'tr',
                    {},
                    h('th', { scope: 'row' }, n.idA ? h('a', { href: planHash(planId, `?node=${encodeURIComponent(n.idA)}`) }, n.name) : n.name),
                    statusCell(n.statusA),
                    statusCell(n.statusB),
                    h('td', { class: 'num' }, dec(n.marginA)),
                    h('td', { class: 'num' }, dec(n.marginB)),
                    h('td', { class: 'num' }, n.marginChangeDb === null ? '–' : signed(n.marginChangeDb, ' dB', 1)),
                  ),
                ),
              ),
            ),
          ),
      h('p', { class: 'muted small' }, (['served', 'marginal', 'unserved'] as const).map((s) => `${statusStyle[s].label}`).join(' · ')),
    ),
  );
}

export async function renderCompare(main: HTMLElement, route: Route): Promise<void> {
  const planId = route.planId as string;
  const plans = await listPlans();
  const self = plans.find((p) => p.id === planId);
  const others = plans.filter((p) => p.id !== planId);
  const wanted = route.params.get('with');
  main.append(
    h('h1', {}, `Compare scenarios · ${self?.name ?? planId}`),
    h('p', { class: 'muted' }, 'A is this plan. Pick another plan of the team as B, or copy this plan (sites, gateways, nodes, kit and terrain) to try a change without touching it.'),
  );
  const out = h('div', { id: 'compare-result', 'aria-live': 'polite' });
  const select = h('select', { id: 'compare-with', 'aria-label': 'Plan B' }, h('option', { value: '' }, others.length ? 'Choose plan B…' : 'No other plan in this team'), ...others.map((p: Plan) => h('option', { value: p.id, selected: p.id === wanted }, p.name)));
  const run = async (otherId: string) => {
    clear(out);
    out.append(h('p', { class: 'muted' }, 'Predicting both fleets… (a large plan takes a while the first time)'));
    try {
      renderComparison(out, await comparePlans(planId, otherId), planId);
    } catch (err) {
      clear(out);
      out.append(notice('error', `The comparison failed: ${errorText(err)}`));
    }
  };
  select.addEventListener('change', () => {
    if (select.value) go(planHash(planId, `/compare?with=${encodeURIComponent(select.value)}`));
  });
  const nameInput = h('input', { id: 'copy-name', type: 'text', maxlength: 200, value: `${self?.name ?? 'Plan'} (copy)`, 'aria-label': 'Name of the copy' });
  const copyStatus = h('span', { class: 'muted small', 'aria-live': 'polite' });
  const copyButton = h('button', { type: 'button', id: 'copy-plan' }, 'Copy this plan');
  copyButton.addEventListener('click', async () => {
    copyButton.setAttribute('disabled', '');
    copyStatus.textContent = 'Copying…';
    try {
      const copy = await copyPlan(planId, nameInput.value.trim());
      copyStatus.textContent = `Copied: ${copy.name}. Edit it on its map, then compare here.`;
      go(planHash(planId, `/compare?with=${encodeURIComponent(copy.id)}`));
    } catch (err) {
      copyStatus.textContent = `Copy failed: ${errorText(err)}`;
    } finally {
      copyButton.removeAttribute('disabled');
    }
  });
  main.append(
    h(
      'section',
      { class: 'card compare-controls' },
      h('label', { for: 'compare-with' }, 'Plan B '),
      select,
      wanted ? h('a', { href: planHash(wanted), class: 'small' }, ' open plan B on the map') : null,
      h('div', { class: 'compare-copy' }, h('label', { for: 'copy-name' }, 'Copy as '), nameInput, ' ', copyButton, ' ', copyStatus),
    ),
    out,
  );
  if (wanted && others.some((p) => p.id === wanted)) await run(wanted);
}
