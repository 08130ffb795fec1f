// Node panel: the node's links to every gateway (RSSI, SNR, margin, best SF,
// delivery probability), the path profile of the best link, a kit chooser
// that asks the server for the margin of the chosen antenna × mast height ×
// feedline, the server's recommendation, and the visit sheet.
import {
  ApiError,
  isAbort,
  getLinkCheck,
  getNodeLinks,
  recommend,
  visitSheetUrl,
  type FleetNode,
  type KitPreview,
  type Link,
  type LinkCheck,
  type NodeLinks,
  type Recommendation,
} from '../api.ts';
import { renderNodeReadings } from './calibration-panel.ts';
import { getKitPrice, priceParts } from '../api-kit.ts';
import { explainWriteError, type PlanStore } from '../plan-store.ts';
import { applyRange, rangeProblem } from '../ranges.ts';
import { planHash } from '../router.ts';
import { canEdit } from '../session.ts';
import { announce, cautionsBlock, clear, coords, db, dbm, distance, errorText, field, fmt, h, metres, money, notice, percent, present, select } from '../ui.ts';
import { nodeSymbolSvg, statusStyle, symbolElement, type NodeClass } from '../symbols.ts';
import { cautionGroups } from './gateway-check.ts';
import { obstructionSpans, profileChart, profileKey, profileSeries } from './profile-chart.ts';

interface Actions {
  onEdit: () => void;
  onDelete: () => void;
}

function notAvailable(err: unknown, what: string): HTMLElement {
  if (err instanceof ApiError && err.notAvailable) return notice('info', `${what} is not available on this server yet.`);
  return notice('error', `${what} failed: ${errorText(err)}`);
}

export function kitLabel(store: PlanStore, kit: { antennaDesignId?: string | null; mastHeightM?: number; antennaHeightAglM?: number; feedlineId?: string | null; feedlineLengthM?: number }): string {
  const antenna = store.catalog.antennas.find((a) => a.id === kit.antennaDesignId);
  const feedline = store.catalog.feedlines.find((f) => f.id === kit.feedlineId);
  const height = kit.mastHeightM ?? kit.antennaHeightAglM;
  return [
    antenna ? (/dBi/.test(antenna.name) ? antenna.name : `${antenna.name} (${antenna.gainDbi.toFixed(1)} dBi)`) : kit.antennaDesignId ? `antenna ${kit.antennaDesignId}` : 'antenna not set',
    `at ${metres(height)} above ground`,
    feedline ? `${feedline.name}${kit.feedlineLengthM ? `, ${metres(kit.feedlineLengthM)}` : ''}` : 'no feedline',
  ].join(' · ');
}

/**
 * Fills the panel for one node. `signal` is aborted by the map when the panel goes away (the
 * node is deleted, deselected or another object opens): the panel's requests stop then, and
 * answers that still arrive are not drawn.
 */
export async function renderNodePanel(panel: HTMLElement, store: PlanStore, node: FleetNode, actions: Actions, signal: AbortSignal = new AbortController().signal): Promise<void> {
  const status: NodeClass = store.fleet.get(node.id)?.status ?? 'unknown';
  panel.append(
    h('h2', { id: 'node-panel-title', 'data-status': status }, symbolElement(nodeSymbolSvg(status, 18), ''), ` Node ${node.name}`),
    h('p', { class: `status-line status-${status}`, id: 'node-status-line' }, statusStyle[status].label),
    h(
      'dl',
      { class: 'facts' },
      h('dt', {}, 'Position'),
      h('dd', {}, coords(node.lat, node.lon)),
      h('dt', {}, 'Device'),
      h('dd', {}, `${node.deviceType} · ${node.environment ?? 'outdoor'}`),
      h('dt', {}, 'Kit now'),
      h('dd', { id: 'node-kit-now' }, kitLabel(store, node)),
      h('dt', {}, 'Transmit power'),
      h('dd', {}, dbm(node.txPowerDbm)),
    ),
    h(
      'div',
      { class: 'button-row' },
      canEdit() ? h('button', { type: 'button', onclick: actions.onEdit }, 'Edit node') : null,
      canEdit() ? h('button', { type: 'button', class: 'danger', onclick: actions.onDelete }, 'Delete node') : null,
      h('a', { class: 'button', href: visitSheetUrl(store.planId, node.id), target: '_blank', rel: 'noopener' }, 'Visit sheet (printable)'),
      h('a', { class: 'button', href: planHash(store.planId, `/install/${encodeURIComponent(node.id)}`) }, 'Installer view'),
    ),
  );

  // links per gateway
  const linksBox = h('section', { class: 'subpanel', 'aria-labelledby': 'links-h' }, h('h3', { id: 'links-h' }, 'Links to gateways'), h('p', { class: 'muted' }, 'Predicting…'));
  const profileBox = h('section', { class: 'subpanel', 'aria-labelledby': 'profile-h' }, h('h3', { id: 'profile-h' }, 'Path profile (best link)'), h('p', { class: 'muted' }, 'Loading…'));
  const kitBox = h('section', { class: 'subpanel', 'aria-labelledby': 'kit-h' });
  const recBox = h('section', { class: 'subpanel', 'aria-labelledby': 'rec-h' }, h('h3', { id: 'rec-h' }, 'Recommended kit'), h('p', { class: 'muted' }, 'Searching the catalog…'));
  const cautionsBox = h('div', {}, h('p', { class: 'muted small' }, 'Cautions for this node follow its link check…'));
  const readingsBox = h('section', { class: 'subpanel', 'aria-labelledby': 'node-readings-h' });
  panel.append(linksBox, profileBox, kitBox, recBox, readingsBox, cautionsBox);
  renderNodeReadings(readingsBox, store, node.id, signal);

  renderKitChooser(kitBox, store, node, signal);
  // The three requests run side by side; each fills its own box when it answers (unless
  // the panel was closed meanwhile: then the answer, or the abort, is dropped quietly).
  const settle = <T>(work: Promise<T>, done: (value: T) => void, failed: (err: unknown) => void): Promise<void> =>
    work.then(
      (value) => {
        if (!signal.aborted) done(value);
      },
      (err: unknown) => {
        if (!signal.aborted && !isAbort(err)) failed(err);
      },
    );
  await Promise.all([
    settle(
      getNodeLinks(store.planId, node.id, undefined, signal),
      (links) => {
        renderLinks(linksBox, store, links);
        // The links just predicted carry the node's status (same server rule as the fleet
        // table, which may still be recomputing after an edit): the heading agrees with them.
        showNodeStatus(panel, links.status);
      },
      (err) => {
        clear(linksBox);
        linksBox.append(h('h3', { id: 'links-h' }, 'Links to gateways'), notAvailable(err, 'Link prediction'));
      },
    ),
    settle(
      getLinkCheck(store.planId, node.id, signal),
      (check) => {
        renderProfile(profileBox, check);
        // Fitted to this node (a 1 m soil probe gets no mast list); older servers: the general list.
        cautionsBox.replaceChildren(check.fittedCautions ? cautionGroups(check.fittedCautions, check.cautionsFooter ?? '', 'node-cautions', '⚠ Cautions for this node') : cautionsBlock(check.cautions));
      },
      (err) => {
        clear(profileBox);
        profileBox.append(h('h3', { id: 'profile-h' }, 'Path profile (best link)'), notAvailable(err, 'The link check'));
      },
    ),
    settle(
      recommend(store.planId, node.id, {}, signal),
      (rec) => renderRecommendation(recBox, store, rec),
      (err) => {
        clear(recBox);
        recBox.append(h('h3', { id: 'rec-h' }, 'Recommended kit'), notAvailable(err, 'The kit recommendation'));
      },
    ),
  ]);
}

/** Puts a node's status in the open panel's heading and status line (no re-render). */
export function showNodeStatus(panel: HTMLElement, status: NodeClass): void {
  const title = panel.querySelector<HTMLElement>('#node-panel-title');
  const line = panel.querySelector<HTMLElement>('#node-status-line');
  if (!title || !line || title.dataset.status === status) return;
  title.dataset.status = status;
  title.querySelector('.symbol')?.replaceWith(symbolElement(nodeSymbolSvg(status, 18), ''));
  line.className = `status-line status-${status}`;
  line.textContent = statusStyle[status].label;
}

function gatewayName(store: PlanStore, id: string): string {
  return store.gateways.find((g) => g.id === id)?.name ?? id;
}

function renderLinks(box: HTMLElement, store: PlanStore, links: NodeLinks): void {
  clear(box);
  box.append(h('h3', { id: 'links-h' }, 'Links to gateways'));
  if (links.links.length === 0) {
    box.append(notice('warn', 'No gateway of this plan is within range of this node.'));
    return;
  }
  // One column per gateway (a node hears a few at most), one row per quantity: fits the side panel.
  const gws = links.links;
  const legalText = (l: Link): string =>
    !l.legal ? '–' : l.legal.withinLimit ? `yes (${l.legal.peakEirpDbm.toFixed(1)} dBm EIRP)` : `NO: ${l.legal.excessDb !== null ? `${l.legal.excessDb.toFixed(1)} dB over` : 'outside'} the limit`;
  const rowsSpec: Array<[string, (l: Link) => string, ((l: Link) => string)?]> = [
    ['Distance', (l) => distance(l.distanceM)],
    ['Path loss', (l) => db(l.basicLossDb)],
    ['RSSI', (l) => dbm(l.rssiDbm)],
    ['SNR', (l) => db(l.snrDb)],
    ['Margin', (l) => db(l.marginDb), (l) => (l.marginDb < 0 ? 'num neg' : 'num')],
    ['Best SF', (l) => (l.bestSf ? `SF${l.bestSf}` : l.usedSf ? `none (SF${l.usedSf} used)` : 'none')],
    ['Delivery', (l) => percent(l.deliveryProbability)],
    ['Spread σ', (l) => (typeof l.sigmaDb === 'number' ? `${db(l.sigmaDb)}${l.sigmaSource === 'calibration' ? ' (calibrated)' : ''}` : '–')],
    ['Time on air', (l) => fmt(l.timeOnAirMs ?? null, 'ms', 0)],
    ['Power legal', legalText],
  ];
  const table = h(
    'table',
    { class: 'data-table compact', id: 'links-table' },
    h('caption', { class: 'visually-hidden' }, 'Predicted link to each gateway, best first'),
    h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Gateway'), ...gws.map((l) => h('th', { scope: 'col' }, l.gatewayName ?? gatewayName(store, l.gatewayId))))),
    h('tbody', {}, ...rowsSpec.map(([label, value, cls]) => h('tr', {}, h('th', { scope: 'row' }, label), ...gws.map((l) => h('td', { class: cls ? cls(l) : 'num' }, value(l)))))),
  );
  box.append(
    h('div', { class: 'table-scroll' }, table),
    h('p', {}, 'Probability that at least one gateway hears a message: ', h('strong', { id: 'combined-delivery' }, percent(links.combinedDeliveryProbability)), ' (gateways assumed independent).'),
  );
}

function renderProfile(box: HTMLElement, check: LinkCheck): void {
  clear(box);
  box.append(h('h3', { id: 'profile-h' }, `Path profile to ${check.gatewayName ?? 'the best gateway'}`));
  const profile = check.profile;
  const series = profileSeries(profile);
  if (!profile || !series) {
    box.append(notice('info', check.gatewayId ? 'No terrain profile for this link.' : 'No gateway is within range of this node, so there is no path to draw.'));
    return;
  }
  const wrap = h('figure', { class: 'chart' });
  wrap.append(profileChart(series, `Terrain profile from the node to ${check.gatewayName ?? 'its best gateway'}`), profileKey());
  box.append(wrap);
  const clearance =
    profile.worstClearanceRatio === null
      ? ''
      : ` Worst clearance ${profile.worstClearanceAtM !== null ? `at ${distance(profile.worstClearanceAtM)} ` : ''}is ${profile.worstClearanceRatio.toFixed(2)} × the first Fresnel zone radius${profile.worstClearanceRatio < 0 ? ' (negative: the ray passes below the surface)' : ''}; effective earth radius factor k = ${profile.kFactor.toFixed(2)}.`;
  if (series.obstructions.length > 0) {
    const spans = obstructionSpans(series).length;
    box.append(notice('warn', `Terrain or clutter enters the first Fresnel zone in ${spans} place(s)${profile.lineOfSight ? '' : ' and block the line of sight'}: expect diffraction loss.${clearance}`));
  } else {
    box.append(h('p', { class: 'muted' }, `The first Fresnel zone is clear of terrain and clutter.${clearance}`));
  }
  const ex = profile.expected;
  box.append(
    h(
      'p',
      { id: 'expected-range' },
      `Expected at the gateway at SF${ex.sf} (10th–90th percentile, σ ${ex.sigmaDb.toFixed(1)} dB): RSSI `,
      h('strong', {}, `${ex.rssiDbm.p10.toFixed(1)} to ${ex.rssiDbm.p90.toFixed(1)} dBm`),
      ', SNR ',
      h('strong', {}, `${ex.snrDb.p10.toFixed(1)} to ${ex.snrDb.p90.toFixed(1)} dB`),
      '.',
    ),
    ex.note ? h('p', { class: 'muted small' }, ex.note) : '',
  );
  if (check.warnings.length > 0) box.append(notice('info', check.warnings.join(' ')));
}

// ---------- kit chooser ----------

/** The mast of a recommended option loaded into the chooser (its price names that mast); cleared when the height is typed. */
let chosenMastOptionId: string | null = null;

function renderKitChooser(box: HTMLElement, store: PlanStore, node: FleetNode, signal: AbortSignal): void {
  box.append(h('h3', { id: 'kit-h' }, 'Try another kit'));
  if (store.catalog.antennas.length === 0) {
    box.append(notice('info', 'The kit catalog is empty or not available on this server yet.'));
    return;
  }
  const antenna = select(
    store.catalog.antennas.map((a) => ({ value: a.id, label: `${a.name}${/dBi/.test(a.name) ? '' : ` (${a.gainDbi.toFixed(1)} dBi)`}${a.homemade ? ', home-made' : ''} · ${(a.costUsd ?? 0).toFixed(0)} USD` })),
    node.antennaDesignId,
    { id: 'kit-antenna' },
  );
  const height = applyRange(h('input', { id: 'kit-height', type: 'number', min: '-10', max: '200', step: '0.5', inputmode: 'decimal' }), 'nodeAntennaHeightAglM');
  height.value = String(node.antennaHeightAglM ?? 1.5);
  const heightRange = h('input', { id: 'kit-height-range', type: 'range', min: '0.5', max: '20', step: '0.5', 'aria-label': 'Mast height slider (m)' });
  heightRange.value = height.value;
  const feedline = select(
    [
      { value: 'none', label: 'none (radio at the antenna)' },
      ...store.catalog.feedlines.map((f) => ({ value: f.id, label: `${f.name} (${f.lossDbPer100m.toFixed(1)} dB/100 m) · ${(f.costUsdPerM ?? 0).toFixed(2)} USD/m` })),
    ],
    node.feedlineId ?? 'none',
    { id: 'kit-feedline' },
  );
  const feedLength = applyRange(h('input', { id: 'kit-feedline-length', type: 'number', min: '0', max: '500', step: '0.5', inputmode: 'decimal' }), 'nodeFeedlineLengthM');
  feedLength.value = String(node.feedlineLengthM ?? 0);
  const out = h('div', { class: 'kit-result', id: 'kit-result', 'aria-live': 'polite' });
  const applyStatus = h('p', { 'aria-live': 'polite' });
  box.append(
    h('p', { class: 'muted small' }, 'Change the antenna, the mast height or the feedline: earshot predicts this node with that kit at once (nothing is saved until you apply it).'),
    h('div', { class: 'kit-grid' }, field('Antenna design', antenna), field('Mast height above ground (m)', height), heightRange, field('Feedline', feedline), field('Feedline length (m)', feedLength)),
    out,
  );
  let seq = 0;
  const evaluate = async (): Promise<void> => {
    if (signal.aborted) return;
    const mine = ++seq;
    const heightM = Number(height.value);
    const lengthM = Number(feedLength.value || 0);
    const problem = rangeProblem('Mast height (m)', height) ?? (feedLength.value === '' ? null : rangeProblem('Feedline length (m)', feedLength));
    if (problem !== null || !Number.isFinite(lengthM)) {
      out.replaceChildren(notice('error', problem ?? 'Feedline length (m): a number.'));
      return;
    }
    out.classList.add('busy');
    const preview: KitPreview = { antennaDesignId: antenna.value, antennaHeightAglM: heightM, feedlineId: feedline.value, feedlineLengthM: feedline.value === 'none' ? 0 : lengthM };
    try {
      // The price comes from the server's one kit-price function (same as the recommendation's).
      const [result, price] = await Promise.all([
        getNodeLinks(store.planId, node.id, preview, signal),
        getKitPrice(store.planId, { antennaDesignId: antenna.value, antennaHeightAglM: heightM, feedlineId: feedline.value === 'none' ? null : feedline.value, feedlineLengthM: feedline.value === 'none' ? 0 : lengthM, mastOptionId: chosenMastOptionId }, signal).catch((err: unknown) => {
          if (isAbort(err)) throw err;
          return null;
        }),
      ]);
      if (mine !== seq || signal.aborted) return;
      const best = result.links.find((l) => l.gatewayId === result.bestGatewayId) ?? result.links[0];
      out.replaceChildren(
        ...present<HTMLElement>(
          h(
            'dl',
            { class: 'facts big' },
            h('dt', {}, 'Margin'),
            h('dd', { id: 'kit-margin', class: best && best.marginDb < 0 ? 'neg' : '' }, best ? db(best.marginDb) : 'no gateway in range'),
            h('dt', {}, 'Best gateway'),
            h('dd', {}, best ? `${best.gatewayName ?? best.gatewayId} · RSSI ${dbm(best.rssiDbm)} · SNR ${db(best.snrDb)}${best.bestSf ? ` · SF${best.bestSf}` : ''}` : '–'),
            h('dt', {}, 'Delivery probability'),
            h('dd', { id: 'kit-delivery' }, percent(result.combinedDeliveryProbability)),
            h('dt', {}, 'Status'),
            h('dd', { id: 'kit-status' }, symbolElement(nodeSymbolSvg(result.status, 16), ''), ` ${result.status} (target ${db(result.target.targetMarginDb)})`),
            h('dt', {}, 'Kit cost'),
            h('dd', { id: 'kit-cost' }, price ? money(price.totalUsd) : 'not available'),
            price ? h('dd', { class: 'muted small' }, `${priceParts(price)}${price.mastName ? '' : heightM >= 0.5 ? ' · no catalog mast this tall' : ''}`) : null,
          ),
          canEdit()
            ? h(
                'button',
                {
                  type: 'button',
                  id: 'kit-apply',
                  onclick: () => {
                    const changes: Record<string, unknown> = {
                      antennaDesignId: preview.antennaDesignId,
                      antennaHeightAglM: heightM,
                      feedlineId: feedline.value === 'none' ? null : feedline.value,
                      feedlineLengthM: feedline.value === 'none' ? 0 : lengthM,
                      mastOptionId: price?.mastOptionId ?? null,
                    };
                    void store
                      .update('nodes', node.id, changes, true, `changed the kit of ${node.name}`)
                      .then(() => {
                        applyStatus.textContent = 'Kit saved to the node (undo is available).';
                        announce(applyStatus.textContent);
                      })
                      .catch((err: unknown) => {
                        applyStatus.textContent = explainWriteError(err, store, `node ${node.name}`);
                      });
                  },
                },
                'Apply this kit to the node',
              )
            : null,
          applyStatus,
          heightM > 2 ? notice('warn', `A ${metres(heightM)} mast means work at height: see the safety cautions below.`) : null,
        ),
      );
    } catch (err) {
      if (mine !== seq || signal.aborted || isAbort(err)) return;
      out.replaceChildren(notAvailable(err, 'Predicting this kit'));
    } finally {
      if (mine === seq) out.classList.remove('busy');
    }
  };
  let timer: number | undefined;
  const schedule = (): void => {
    window.clearTimeout(timer);
    if (!signal.aborted) timer = window.setTimeout(() => void evaluate(), 250);
  };
  signal.addEventListener('abort', () => window.clearTimeout(timer), { once: true });
  antenna.addEventListener('change', schedule);
  feedline.addEventListener('change', () => {
    if (feedline.value !== 'none' && Number(feedLength.value || 0) === 0) feedLength.value = String(Number(height.value) + 1);
    schedule();
  });
  feedLength.addEventListener('input', schedule);
  height.addEventListener('input', () => {
    chosenMastOptionId = null;
    heightRange.value = height.value;
    schedule();
  });
  heightRange.addEventListener('input', () => {
    chosenMastOptionId = null;
    height.value = heightRange.value;
    schedule();
  });
  void evaluate();
}

function renderRecommendation(box: HTMLElement, store: PlanStore, rec: Recommendation): void {
  clear(box);
  box.append(h('h3', { id: 'rec-h' }, 'Recommended kit'));
  const options = rec.options;
  const notes = [...rec.advice, ...rec.warnings];
  const adviceList = notes.length ? h('ul', { class: 'advice' }, ...notes.map((n) => h('li', {}, n))) : '';
  if (options.length === 0) {
    box.append(notice('warn', 'The catalog has no option for this node.', adviceList));
    return;
  }
  box.append(h('p', { class: 'muted small' }, `Target: margin ${db(rec.target.targetMarginDb)}, delivery ${percent(rec.target.targetDelivery)}. Cheapest option that meets it first.`));
  if (!rec.anyMeetsTarget) {
    box.append(notice('warn', 'No kit in the catalog meets the target; the best available is shown.', adviceList));
  } else if (notes.length) {
    box.append(notice('info', adviceList));
  }
  const list = h('ol', { class: 'rec-list', id: 'rec-list' });
  for (const option of options.slice(0, 3)) {
    list.append(
      h(
        'li',
        {},
        h('strong', {}, kitLabel(store, { antennaDesignId: option.antennaDesignId, mastHeightM: option.mastHeightM, feedlineId: option.feedlineId, feedlineLengthM: option.feedlineLengthM })),
        h('br', {}),
        `margin ${db(option.marginDb)} · delivery ${percent(option.deliveryProbability)} · `,
        h('span', { class: 'rec-cost' }, `cost ${money(option.price?.totalUsd ?? option.cost)}`),
        ` · ${option.meetsTarget ? 'meets the target' : 'below the target'}`,
        option.price ? h('span', { class: 'muted small' }, h('br', {}), priceParts(option.price)) : null,
        option.reason ? h('span', { class: 'muted small' }, ` — ${option.reason}`) : null,
        h('br', {}),
        h('button', { type: 'button', class: 'small-button', onclick: () => loadIntoChooser(option) }, 'Try it in the kit chooser'),
      ),
    );
  }
  box.append(list);
  if (rec.fittedCautions) box.append(cautionGroups(rec.fittedCautions, rec.cautionsFooter ?? '', 'rec-cautions', '⚠ Cautions for the first option'));
}

/** Puts a recommended option into the kit chooser's controls (which then predict it). */
function loadIntoChooser(option: Recommendation['options'][number]): void {
  const set = (id: string, value: string, event: string): void => {
    const el = document.getElementById(id) as HTMLInputElement | HTMLSelectElement | null;
    if (!el) return;
    el.value = value;
    el.dispatchEvent(new Event(event));
  };
  set('kit-antenna', option.antennaDesignId, 'change');
  set('kit-feedline-length', String(option.feedlineId ? option.feedlineLengthM : 0), 'input');
  set('kit-feedline', option.feedlineId ?? 'none', 'change');
  set('kit-height', String(option.mastHeightM), 'input');
  chosenMastOptionId = option.mastOptionId;
  document.getElementById('kit-h')?.scrollIntoView({ block: 'start' });
  document.getElementById('kit-height')?.focus();
}
