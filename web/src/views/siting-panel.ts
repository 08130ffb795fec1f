// Gateway siting view for planners: choose how many gateways each node must
// hear (k), a budget or gateway limit, and where candidates come from; follow
// the run; see the chosen sites on a map with their rank and the nodes only
// they serve, the nodes no candidate hears and why, before/after counts; and
// apply the answer (creates the gateways; undo deletes them again).
import * as L from 'leaflet';
import { getFleet, hillshadeTileUrl, listEntities, type FleetNode } from '../api.ts';
import { applySiting, cancelSiting, getSiting, startSiting, undoSiting, type SitingResult, type SitingRun } from '../api-siting.ts';
import type { Route } from '../router.ts';
import { planHash } from '../router.ts';
import { applyRange, fieldRange, rangeProblem } from '../ranges.ts';
import { canEdit } from '../session.ts';
import { announce, clear, errorText, field, h, money, notice, select } from '../ui.ts';

const kChoices = [
  { value: '1', label: '1 gateway (every node heard once)' },
  { value: '2', label: '2 gateways (redundancy: one can fail)' },
  { value: '3', label: '3 gateways' },
];
const objectiveChoices = [
  { value: 'gateways', label: 'Fewest gateways' },
  { value: 'cost', label: 'Least cost (sites + kit)' },
];

/** The first few names, then how many more (the full list is in the API answer). */
function onlyText(names: string[]): string {
  if (names.length === 0) return 'none';
  const shown = names.slice(0, 6).join(', ');
  return names.length > 6 ? `${names.length}: ${shown} and ${names.length - 6} more` : `${names.length}: ${shown}`;
}

function numberInput(id: string, attrs: Record<string, string>): HTMLInputElement {
  return h('input', { type: 'number', id, inputmode: 'decimal', ...attrs });
}

export async function renderSiting(main: HTMLElement, route: Route): Promise<() => void> {
  const planId = route.planId as string;
  main.append(h('h1', {}, 'Gateway siting'));
  main.append(
    h(
      'p',
      { class: 'muted' },
      'Where to put gateways, and how few will do: every candidate is checked against every node with the same link prediction as the ',
      h('a', { href: planHash(planId, '/fleet') }, 'fleet table'),
      ', then an exact optimiser picks the set. Site visits decide in the end: access, power, permits and safe work at height come first.',
    ),
  );
  if (!canEdit()) {
    main.append(notice('info', 'Only planners can run the siting optimiser. Ask a planner on your team.'));
    return () => undefined;
  }
  const k = select(kChoices, '1', { id: 'siting-k' });
  const objective = select(objectiveChoices, 'gateways', { id: 'siting-objective' });
  const useSites = h('input', { type: 'checkbox', id: 'siting-sites', checked: true });
  const terrainPoints = numberInput('siting-terrain', { min: '0', max: '500', step: '1', value: '0' });
  const keepExisting = h('input', { type: 'checkbox', id: 'siting-keep', checked: true });
  const budget = numberInput('siting-budget', { min: '0', step: '100', placeholder: 'none' });
  const maxGateways = numberInput('siting-max-gateways', { min: '0', step: '1', placeholder: 'none' });
  // Limits from the server's FIELD_RANGES (GET /client-settings), the rule the API applies.
  const perGateway = applyRange(numberInput('siting-max-per-gateway', { inputmode: 'numeric', placeholder: 'none' }), 'maxNodesPerGateway');
  const perGatewayRange = fieldRange('maxNodesPerGateway');
  const perGatewayLabel = 'Nodes per gateway, at most (optional)';
  const run = h('button', { type: 'submit', id: 'siting-run' }, 'Find sites');
  const status = h('p', { id: 'siting-status', 'aria-live': 'polite', class: 'muted' });
  const progress = h('progress', { id: 'siting-progress', max: '1', value: '0', hidden: true });
  const cancel = h('button', { type: 'button', id: 'siting-cancel', hidden: true }, 'Cancel');
  const out = h('div', { id: 'siting-result' });
  const form = h(
    'form',
    // novalidate: the panel checks the values itself and says which field and rule (the browser's bubble names neither).
    { class: 'card toolbar-form', id: 'siting-form', novalidate: true },
    field('Each node heard by', k),
    field('Optimise for', objective),
    field('Use the plan’s candidate sites', useSites),
    field('Terrain high points to add', terrainPoints, 'Highest local points of the terrain inside the fleet’s area, 500 m apart.'),
    field('Keep existing gateways', keepExisting, 'Ticked: the plan’s gateways stay and the optimiser adds to them. Unticked: start over — existing gateways are candidates like the others (no cost, they are built), and applying removes the ones the answer drops (undo puts them back).'),
    field('Budget (USD, optional)', budget, 'With a budget or a gateway limit the optimiser covers as many nodes as it can within it.'),
    field('At most this many gateways (optional)', maxGateways),
    field(
      perGatewayLabel,
      perGateway,
      `The most nodes one gateway may serve (its radio’s or backhaul’s capacity); a node that must be heard by 2 or 3 gateways takes a place at each of them. Nodes the chosen gateways hear but cannot seat are listed as full.${perGatewayRange ? ` Whole ${perGatewayRange.unit}, ${perGatewayRange.min} to ${perGatewayRange.max}.` : ''}`,
    ),
    run,
  );
  main.append(form, h('div', { class: 'button-row' }, progress, cancel), status, out);

  let timer: number | undefined;
  let currentRun: string | null = null;
  const stop = (): void => {
    if (timer !== undefined) window.clearTimeout(timer);
    timer = undefined;
  };

  const poll = async (): Promise<void> => {
    if (!currentRun) return;
    let state: SitingRun;
    try {
      state = await getSiting(planId, currentRun);
    } catch (err) {
      status.textContent = `Could not read the run: ${errorText(err)}`;
      return;
    }
    progress.value = state.progress;
    if (state.status === 'queued' || state.status === 'running') {
      status.textContent = state.progress < 0.93 ? `Predicting links from every candidate to every node… ${Math.round(state.progress * 100)} %` : 'Solving…';
      timer = window.setTimeout(() => void poll(), 700);
      return;
    }
    progress.hidden = true;
    cancel.hidden = true;
    run.removeAttribute('disabled');
    if (state.status === 'done' && state.result) {
      status.textContent = 'Done.';
      await show(state, state.result);
    } else if (state.status === 'failed') {
      status.textContent = '';
      clear(out);
      out.append(notice('error', `The siting run failed: ${state.error ?? 'no reason given'}`));
    } else status.textContent = 'Cancelled.';
  };

  form.addEventListener('submit', (event) => {
    event.preventDefault();
    void (async () => {
      const budgetUsd = budget.value === '' ? undefined : Number(budget.value);
      const limit = maxGateways.value === '' ? undefined : Number(maxGateways.value);
      const points = Number(terrainPoints.value || '0');
      const cap = perGateway.value.trim() === '' ? undefined : Number(perGateway.value);
      if (budgetUsd !== undefined && !(budgetUsd >= 0)) {
        status.textContent = 'The budget must be 0 USD or more.';
        return;
      }
      if (limit !== undefined && !(Number.isInteger(limit) && limit >= 0)) {
        status.textContent = 'The gateway limit must be a whole number, 0 or more.';
        return;
      }
      if (cap !== undefined) {
        const problem = rangeProblem(perGatewayLabel, perGateway) ?? (Number.isInteger(cap) ? null : `${perGatewayLabel}: a whole number.`);
        if (problem) {
          status.textContent = problem;
          return;
        }
      }
      if (!(Number.isInteger(points) && points >= 0 && points <= 500)) {
        status.textContent = 'Terrain high points must be a whole number from 0 to 500.';
        return;
      }
      stop();
      clear(out);
      run.setAttribute('disabled', '');
      try {
        const started = await startSiting(planId, {
          requiredGateways: Number(k.value),
          candidates: { sites: useSites.checked, terrainPoints: points },
          keepExistingGateways: keepExisting.checked,
          minimise: objective.value as 'gateways' | 'cost',
          ...(budgetUsd !== undefined ? { budgetUsd } : {}),
          ...(limit !== undefined ? { maxGateways: limit } : {}),
          ...(cap !== undefined ? { maxNodesPerGateway: cap } : {}),
        });
        currentRun = started.id;
        progress.hidden = false;
        progress.value = 0;
        cancel.hidden = false;
        status.textContent = 'Queued…';
        await poll();
      } catch (err) {
        run.removeAttribute('disabled');
        status.textContent = '';
        out.append(notice('error', `The siting run could not start: ${errorText(err)}`));
      }
    })();
  });
  cancel.addEventListener('click', () => {
    if (currentRun) void cancelSiting(planId, currentRun).catch(() => undefined);
  });

  let map: L.Map | null = null;
  const show = async (state: SitingRun, result: SitingResult): Promise<void> => {
    clear(out);
    map?.remove();
    map = null;
    const nodes: FleetNode[] = await listEntities<FleetNode>(planId, 'nodes').catch(() => []);
    const nodeName = new Map(nodes.map((n) => [n.id, n.name]));
    const proof = result.optimal
      ? `proven optimal by ${result.solver} in ${result.seconds.toFixed(2)} s`
      : result.status === 'infeasible'
        ? `no answer: ${result.message ?? 'the rules cannot all be met'}`
        : `best found in the time limit (gap ${result.gapPercent ?? '?'} %), ${result.solver}`;
    const newSites = result.selected.filter((s) => !s.kept);
    const dropped = result.removed ?? [];
    out.append(
      h(
        'section',
        { class: 'card', id: 'siting-summary', 'aria-labelledby': 'siting-summary-title' },
        h('h2', { id: 'siting-summary-title' }, `${result.objective.gateways} gateway(s), ${money(result.objective.costUsd)}`),
        h('p', {}, `Covers ${result.coveredNodeIds.length} of ${result.nodesTotal} nodes (${result.nodesCoverable} can be heard by some candidate) with each heard by ${result.requiredGateways}; ${proof}.`),
        h('p', { class: 'muted' }, `Greedy choice for comparison: ${result.greedy.gateways} gateway(s), ${money(result.greedy.costUsd)}. Matrix: ${result.matrix.nodes} nodes × ${result.matrix.candidates} candidates, ${result.matrix.pairsPredicted} links predicted${result.matrix.cached ? ' (reused)' : ` in ${result.matrix.seconds.toFixed(1)} s`}.`),
        h('p', { id: 'siting-before-after' }, `Gateways before: ${result.before.gateways}; after applying: ${result.after.gateways}.`),
        ...(dropped.length > 0 ? [h('p', { id: 'siting-removed' }, `Applying removes ${dropped.length} existing gateway(s) the answer does not keep: ${dropped.map((g) => g.name).join(', ')}.`)] : []),
        ...result.warnings.slice(0, 5).map((w) => h('p', { class: 'warn-text' }, w)),
      ),
    );
    const mapEl = h('div', { class: 'siting-map', id: 'siting-map', role: 'region', 'aria-label': 'Chosen sites and nodes' });
    out.append(mapEl);
    const rows = result.selected.map((s) =>
      h(
        'tr',
        { 'data-candidate-id': s.candidateId },
        h('th', { scope: 'row', class: 'num' }, String(s.rank)),
        h('td', {}, s.name, s.kept ? ' (kept as built)' : ''),
        h('td', { class: 'num' }, money(s.costUsd)),
        h('td', { class: 'num' }, String(s.nodesHeard)),
        h('td', { class: 'siting-only' }, onlyText(s.nodeIdsOnlyHere.map((id) => nodeName.get(id) ?? id))),
      ),
    );
    out.append(
      h(
        'table',
        { class: 'data-table', id: 'siting-table' },
        h('caption', {}, 'Chosen sites, ranked by the nodes that depend on them'),
        h('thead', {}, h('tr', {}, h('th', { scope: 'col', class: 'num' }, 'Rank'), h('th', { scope: 'col' }, 'Site'), h('th', { scope: 'col', class: 'num' }, 'Cost'), h('th', { scope: 'col', class: 'num' }, 'Nodes heard'), h('th', { scope: 'col' }, 'Nodes only it serves'))),
        h('tbody', {}, ...rows),
      ),
    );
    if (result.uncovered.length > 0) {
      out.append(
        h(
          'section',
          { class: 'card', id: 'siting-uncovered', 'aria-labelledby': 'siting-uncovered-title' },
          h('h2', { id: 'siting-uncovered-title' }, `Not covered (${result.uncovered.length})`),
          h('ul', {}, ...result.uncovered.map((u) => h('li', {}, h('strong', {}, u.name), ` — ${u.reason}`))),
        ),
      );
    }
    if (result.shortOfRequired.length > 0) {
      out.append(h('p', { class: 'muted' }, `${result.shortOfRequired.length} node(s) can be heard by fewer than ${result.requiredGateways} candidates; they get as many as can hear them.`));
    }
    const applyBox = h('div', { class: 'button-row', id: 'siting-apply-box' });
    out.append(applyBox);
    const showApply = (): void => {
      clear(applyBox);
      if ((newSites.length === 0 && dropped.length === 0) || result.status === 'infeasible') return;
      const apply = h('button', { type: 'button', id: 'siting-apply' }, dropped.length > 0 ? `Create ${newSites.length} gateway(s), remove ${dropped.length}` : `Create ${newSites.length} gateway(s)`);
      apply.addEventListener('click', () => {
        void (async () => {
          apply.setAttribute('disabled', '');
          try {
            const before = await getFleet(planId).catch(() => null);
            const made = await applySiting(planId, state.id);
            const after = await getFleet(planId).catch(() => null);
            clear(applyBox);
            const counts = (f: typeof before) => (f?.counts ? `${f.counts.served ?? 0} served, ${f.counts.marginal ?? 0} marginal, ${f.counts.unserved ?? 0} unserved` : 'unknown');
            const undo = h('button', { type: 'button', id: 'siting-undo' }, made.removedGatewayIds.length > 0 ? 'Undo (delete these gateways, restore the removed ones)' : 'Undo (delete these gateways)');
            const removedText = made.removedGatewayIds.length > 0 ? ` Removed ${made.removedGatewayIds.length} existing gateway(s).` : '';
            applyBox.append(notice('ok', `Created ${made.gatewayIds.length} gateway(s).${removedText} Fleet before: ${counts(before)}; now: ${counts(after)}.`), undo);
            announce(`Created ${made.gatewayIds.length} gateways`);
            undo.addEventListener('click', () => {
              void (async () => {
                undo.setAttribute('disabled', '');
                try {
                  await undoSiting(planId, state.id);
                  clear(applyBox);
                  applyBox.append(notice('info', 'The created gateways were deleted again and any removed ones restored; run the optimiser again to apply an answer.'));
                } catch (err) {
                  applyBox.append(notice('error', `Undo failed: ${errorText(err)}`));
                }
              })();
            });
          } catch (err) {
            apply.removeAttribute('disabled');
            applyBox.append(notice('error', `Could not apply: ${errorText(err)}`));
          }
        })();
      });
      applyBox.append(apply);
    };
    showApply();
    // The map: chosen sites numbered by rank, nodes only they serve outlined, uncovered nodes marked.
    map = L.map(mapEl, { zoomControl: true, keyboard: true, attributionControl: true });
    map.attributionControl.setPrefix(false);
    L.tileLayer(hillshadeTileUrl(planId), { maxZoom: 18, minZoom: 5, attribution: 'Hillshade from the plan’s terrain layers' }).addTo(map);
    const onlyHere = new Set(result.selected.flatMap((s) => s.nodeIdsOnlyHere));
    const uncovered = new Set(result.uncoveredNodeIds);
    const bounds = L.latLngBounds([]);
    for (const n of nodes) {
      const kind = uncovered.has(n.id) ? 'uncovered' : onlyHere.has(n.id) ? 'only-here' : 'covered';
      const colour = kind === 'uncovered' ? '#b3261e' : kind === 'only-here' ? '#7a4e00' : '#2e6b30';
      L.circleMarker([n.lat, n.lon], { radius: kind === 'covered' ? 4 : 6, color: colour, weight: 2, fillOpacity: kind === 'uncovered' ? 0 : 0.6 })
        .bindTooltip(`${n.name}: ${kind === 'uncovered' ? 'not covered' : kind === 'only-here' ? 'depends on one chosen site' : 'covered'}`)
        .addTo(map);
      bounds.extend([n.lat, n.lon]);
    }
    for (const s of result.selected) {
      const icon = L.divIcon({ className: 'siting-rank', html: `<span class="siting-rank-badge" aria-hidden="true">${s.rank}</span>`, iconSize: [24, 24] });
      L.marker([s.lat, s.lon], { icon, title: `${s.rank}. ${s.name}`, keyboard: true }).bindTooltip(`${s.rank}. ${s.name}: ${s.nodesOnlyHere} node(s) depend on it`).addTo(map);
      bounds.extend([s.lat, s.lon]);
    }
    if (bounds.isValid()) map.fitBounds(bounds.pad(0.1));
  };

  return () => {
    stop();
    map?.remove();
  };
}
