// Network load view: per gateway the offered load per SF and per channel as
// bars, the collision probability and the gateway's own reply airtime; the
// nodes over their duty-cycle or dwell budget; the nodes that deliver least;
// and a what-if of another reporting rate (every node's messages per hour ×
// a factor), recomputed by the server with the chosen model.
import { getCapacity, type CapacityGateway, type CapacityModel, type PlanCapacity } from '../api-capacity.ts';
import { isAbort } from '../api.ts';
import type { Route } from '../router.ts';
import { planHash } from '../router.ts';
import { clear, errorText, field, fmt, h, notice, percent, select } from '../ui.ts';

/** Bar scale: pure ALOHA carries the most traffic at 0.5 erlang per channel (Abramson 1970). */
const FULL_SCALE_ERLANG = 0.5;

const models: Array<{ value: CapacityModel; label: string }> = [
  { value: 'capture', label: 'Capture (co-SF capture and inter-SF rejection, from predicted RSSI)' },
  { value: 'aloha', label: 'Pure ALOHA (SFs orthogonal)' },
  { value: 'simulate', label: 'Simulation (1 h of traffic, seeded)' },
];

/** Light loads keep four decimals so a quiet gateway does not read as 0.000. */
const erlangText = (erlang: number): string => erlang.toFixed(erlang < 0.01 ? 4 : 3);

function loadBar(erlang: number, label: string): HTMLElement {
  const share = Math.min(1, erlang / FULL_SCALE_ERLANG);
  const level = erlang >= 0.18 ? 'high' : erlang >= 0.05 ? 'mid' : 'low';
  return h(
    'div',
    { class: `load-bar load-${level}`, role: 'img', 'aria-label': `${label}: ${erlangText(erlang)} erlang` },
    h('span', { class: 'load-fill', style: `width:${(share * 100).toFixed(1)}%` }),
    h('span', { class: 'load-text' }, `${erlangText(erlang)} E`),
  );
}

function gatewayCard(gateway: CapacityGateway, result: PlanCapacity): HTMLElement {
  const id = `cap-gw-${gateway.gatewayId}`;
  const perSf = h(
    'table',
    { class: 'data-table compact' },
    h('caption', { class: 'visually-hidden' }, `Load per SF at ${gateway.gatewayName}`),
    h(
      'thead',
      {},
      h('tr', {}, h('th', { scope: 'col' }, 'SF'), h('th', { scope: 'col', class: 'num' }, 'Nodes heard'), h('th', { scope: 'col' }, 'Load per channel'), h('th', { scope: 'col', class: 'num' }, 'Share of airtime'), h('th', { scope: 'col', class: 'num' }, 'Frames lost')),
    ),
    h(
      'tbody',
      {},
      ...gateway.perSf.map((entry) =>
        h(
          'tr',
          {},
          h('th', { scope: 'row' }, `SF${entry.sf}`),
          h('td', { class: 'num' }, String(entry.nodes)),
          h('td', {}, loadBar(entry.offeredLoadErlangPerChannel, `SF${entry.sf}`)),
          h('td', { class: 'num' }, percent(entry.airtimeShare)),
          h('td', { class: entry.collisionProbability > 0.1 ? 'num neg' : 'num' }, percent(entry.collisionProbability)),
        ),
      ),
    ),
  );
  const channels = h(
    'ul',
    { class: 'channel-bars', 'aria-label': `Load per channel at ${gateway.gatewayName}` },
    ...gateway.offeredLoadErlangPerChannel.map((erlang, k) => h('li', {}, h('span', { class: 'channel-name' }, `Channel ${k + 1}`), loadBar(erlang, `channel ${k + 1}`))),
  );
  const dl = gateway.downlink;
  const dlLine = h(
    'p',
    { class: dl.overDutyCycle ? 'warn-text' : 'muted' },
    `Replies (acknowledgements): ${dl.messagesPerHour.toFixed(1)} per hour sent of ${dl.demandedMessagesPerHour.toFixed(1)} asked, the gateway transmits ${percent(dl.airtimeShare, 2)} of the time and hears nothing meanwhile`,
    dl.dutyCyclePercent !== null ? ` (its duty cycle allows ${dl.dutyCyclePercent} %)` : '',
    dl.overDutyCycle ? ` — over its duty cycle: about ${dl.repliesDroppedPerHour.toFixed(1)} replies per hour cannot be sent.` : '.',
  );
  return h(
    'section',
    { class: 'card capacity-gateway', 'aria-labelledby': id, 'data-gateway-id': gateway.gatewayId },
    h('h2', { id }, `${gateway.gatewayName}`),
    h('p', {}, `Hears ${gateway.nodes} node(s); offered uplink load ${erlangText(gateway.offeredLoadErlang)} erlang over ${result.channels} channel(s).`),
    perSf,
    h('h3', {}, 'Per channel'),
    channels,
    dlLine,
  );
}

export async function renderCapacity(main: HTMLElement, route: Route): Promise<() => void> {
  const planId = route.planId as string;
  main.append(h('h1', {}, 'Network load'));
  const model = select(models, route.params.get('model') ?? 'capture', { id: 'capacity-model' });
  const rate = h('input', { type: 'number', id: 'capacity-rate', min: '0.1', max: '20', step: '0.1', value: route.params.get('rateScale') ?? '1', inputmode: 'decimal' });
  const confirmed = h('input', { type: 'number', id: 'capacity-confirmed', min: '0', max: '100', step: '1', value: '0', inputmode: 'numeric' });
  const channelCount = h('input', { type: 'number', id: 'capacity-channels', min: '1', max: '64', step: '1', placeholder: 'plan default', inputmode: 'numeric' });
  const run = h('button', { type: 'submit', id: 'capacity-run' }, 'Compute');
  const status = h('p', { id: 'capacity-status', 'aria-live': 'polite', class: 'muted' });
  const out = h('div', { id: 'capacity-result' });
  const form = h(
    'form',
    { class: 'card toolbar-form', id: 'capacity-form' },
    field('Collision model', model),
    field('What-if: reporting rate × (1 = as planned)', rate, 'Every node’s messages per hour times this factor.'),
    field('Confirmed uplinks (%)', confirmed, 'Share of uplinks that ask the gateway for an acknowledgement.'),
    field('What-if: uplink channels', channelCount, 'Empty = the plan’s channels.'),
    run,
  );
  main.append(
    h('p', { class: 'muted' }, 'Whether the gateways can carry the fleet’s traffic: airtime per SF and channel, collisions, duty-cycle budgets. ', h('a', { href: planHash(planId, '/fleet') }, 'Fleet table'), ' shows the delivery ratio per node.'),
    form,
    status,
    out,
  );
  let controller: AbortController | null = null;
  const compute = async (): Promise<void> => {
    controller?.abort();
    controller = new AbortController();
    const rateScale = Number(rate.value);
    const share = Number(confirmed.value) / 100;
    if (!(rateScale > 0 && rateScale <= 20)) {
      status.textContent = 'The reporting-rate factor must be more than 0 and at most 20.';
      return;
    }
    if (!(share >= 0 && share <= 1)) {
      status.textContent = 'Confirmed uplinks must be from 0 to 100 %.';
      return;
    }
    const channels = channelCount.value.trim() === '' ? undefined : Number(channelCount.value);
    if (channels !== undefined && !(Number.isInteger(channels) && channels >= 1 && channels <= 64)) {
      status.textContent = 'Uplink channels must be a whole number from 1 to 64 (or empty for the plan’s own).';
      return;
    }
    run.setAttribute('disabled', '');
    status.textContent = model.value === 'simulate' ? 'Simulating one hour of traffic… (a large fleet takes a few seconds)' : 'Computing…';
    const started = performance.now();
    try {
      const result = await getCapacity(planId, { model: model.value as CapacityModel, rateScale, confirmedShare: share, channels }, controller.signal);
      status.textContent = `Done in ${((performance.now() - started) / 1000).toFixed(1)} s.`;
      show(result);
    } catch (err) {
      if (isAbort(err)) return;
      status.textContent = '';
      clear(out);
      out.append(notice('error', `The network load could not be computed: ${errorText(err)}`));
    } finally {
      run.removeAttribute('disabled');
    }
  };
  const show = (result: PlanCapacity): void => {
    clear(out);
    const t = result.totals;
    const rule =
      result.rules.dutyCyclePercent !== null
        ? `${result.rules.dutyCyclePercent} % duty cycle`
        : result.rules.dwellTimeMs !== null
          ? `${result.rules.dwellTimeMs} ms dwell time per channel${result.rules.dwellWindowS ? ` in ${result.rules.dwellWindowS} s` : ''}`
          : 'no duty-cycle or dwell rule';
    out.append(
      h(
        'section',
        { class: 'card', id: 'capacity-totals', 'aria-labelledby': 'cap-tot-h' },
        h('h2', { id: 'cap-tot-h' }, 'Fleet'),
        h(
          'table',
          { class: 'data-table compact' },
          h(
            'tbody',
            {},
            h('tr', {}, h('th', { scope: 'row' }, 'Nodes'), h('td', { class: 'num' }, String(t.nodes))),
            h('tr', {}, h('th', { scope: 'row' }, 'Mean delivery, link only'), h('td', { class: 'num' }, percent(t.meanLinkDeliveryProbability))),
            h('tr', {}, h('th', { scope: 'row' }, 'Mean delivery with collisions and budgets'), h('td', { class: 'num', id: 'capacity-mean-delivery' }, percent(t.meanDeliveryRatio))),
            h('tr', {}, h('th', { scope: 'row' }, 'Nodes over their airtime budget'), h('td', { class: t.overBudgetNodes > 0 ? 'num neg' : 'num', id: 'capacity-over-budget' }, String(t.overBudgetNodes))),
            h('tr', {}, h('th', { scope: 'row' }, 'Uplink channels · rule'), h('td', {}, `${result.channels} · ${rule}`)),
            t.transmissions !== null ? h('tr', {}, h('th', { scope: 'row' }, 'Frames simulated'), h('td', { class: 'num' }, `${t.transmissions} in ${fmt(result.durationS, 's', 0)} (seed ${result.seed})`)) : null,
          ),
        ),
        h('p', { class: 'muted small' }, `Model: ${result.method}. Bars: full width = ${FULL_SCALE_ERLANG} erlang per channel, where pure ALOHA carries the most traffic.`),
        ...result.warnings.map((w) => notice('warn', w)),
      ),
    );
    for (const gateway of result.gateways) out.append(gatewayCard(gateway, result));
    const over = result.nodes.filter((n) => n.overBudget);
    const overSection = h('section', { class: 'card', id: 'capacity-over', 'aria-labelledby': 'cap-over-h' }, h('h2', { id: 'cap-over-h' }, 'Nodes over their airtime budget'));
    if (over.length === 0) overSection.append(h('p', {}, 'None: every node’s reporting rate fits its duty-cycle and dwell budget.'));
    else
      overSection.append(
        h(
          'table',
          { class: 'data-table compact' },
          h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Node'), h('th', { scope: 'col', class: 'num' }, 'SF'), h('th', { scope: 'col', class: 'num' }, 'Time on air'), h('th', { scope: 'col', class: 'num' }, 'Wanted (msg/h)'), h('th', { scope: 'col', class: 'num' }, 'Budget (msg/h)'), h('th', { scope: 'col' }, 'Why'))),
          h(
            'tbody',
            {},
            ...over.map((n) =>
              h(
                'tr',
                { 'data-node-id': n.nodeId },
                h('th', { scope: 'row' }, h('a', { href: planHash(planId, `?node=${encodeURIComponent(n.nodeId)}`) }, n.nodeName)),
                h('td', { class: 'num' }, n.sf === null ? '–' : `SF${n.sf}`),
                h('td', { class: 'num' }, fmt(n.timeOnAirMs, 'ms', 0)),
                h('td', { class: 'num' }, n.messagesPerHour.toFixed(1)),
                h('td', { class: 'num' }, n.dwellOk === false ? '0' : String(n.maxMessagesPerHourAtDutyCycle ?? n.maxMessagesPerHourAtDwell ?? '–')),
                h('td', {}, n.warnings.join(' ')),
              ),
            ),
          ),
        ),
      );
    out.append(overSection);
    const worst = [...result.nodes].sort((a, b) => a.deliveryRatio - b.deliveryRatio).slice(0, 15);
    out.append(
      h(
        'section',
        { class: 'card', id: 'capacity-worst', 'aria-labelledby': 'cap-worst-h' },
        h('h2', { id: 'cap-worst-h' }, 'Least delivered'),
        h(
          'table',
          { class: 'data-table compact' },
          h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Node'), h('th', { scope: 'col', class: 'num' }, 'Link only'), h('th', { scope: 'col', class: 'num' }, 'Survives collisions'), h('th', { scope: 'col', class: 'num' }, 'Delivery ratio'))),
          h(
            'tbody',
            {},
            ...worst.map((n) =>
              h(
                'tr',
                {},
                h('th', { scope: 'row' }, h('a', { href: planHash(planId, `?node=${encodeURIComponent(n.nodeId)}`) }, n.nodeName)),
                h('td', { class: 'num' }, percent(n.linkDeliveryProbability)),
                h('td', { class: 'num' }, percent(n.successProbability)),
                h('td', { class: 'num' }, percent(n.deliveryRatio)),
              ),
            ),
          ),
        ),
      ),
      h('section', { class: 'cautions', 'aria-label': 'Legal limits' }, h('h3', {}, '⚠ Legal limits'), h('ul', {}, ...result.cautions.map((c) => h('li', {}, c)))),
    );
  };
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    void compute();
  });
  await compute();
  return () => controller?.abort();
}
