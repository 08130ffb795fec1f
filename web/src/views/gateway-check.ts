// The gateway's radiated power and whether the band plan allows it, with cautions fitted to
// its mast height, power and gain; shown in the gateway panel and live in the edit dialog.
import { isAbort } from '../api.ts';
import { previewGatewayCheck, type CautionGroup, type GatewayCheck, type GatewayKitDraft } from '../api-gateways.ts';
import { errorText, fmt, h, notice } from '../ui.ts';

/** Fitted cautions, grouped by topic (server/planning/cautions.ts); only the footer when none apply. */
export function cautionGroups(groups: readonly CautionGroup[], footer: string, id?: string, title = '⚠ Cautions'): HTMLElement {
  if (groups.length === 0) return h('p', { class: 'muted small', id }, footer);
  return h(
    'section',
    { class: 'cautions fitted', 'aria-label': 'Cautions for this change', id },
    h('h3', {}, title),
    ...groups.map((g) => h('div', { class: 'caution-group' }, h('strong', {}, `${g.topic}: `), g.items.join(' '))),
    h('p', { class: 'muted small' }, footer),
  );
}

export function gatewayCheckBlock(check: GatewayCheck): HTMLElement {
  const legal = check.legal;
  const limit = legal.maxEirpDbm === null ? 'no EIRP limit stated' : `limit ${fmt(legal.maxEirpDbm, 'dBm')} EIRP${legal.limitName ? ` (${legal.limitName})` : ''}`;
  const verdict = legal.withinLimit
    ? notice('ok', `Within the ${check.bandPlanName} limit: ${fmt(check.peakEirpDbm, 'dBm')} EIRP, ${limit}.`)
    : notice('error', `Over the legal limit of ${check.bandPlanName}: ${fmt(check.peakEirpDbm, 'dBm')} EIRP, ${limit}${legal.excessDb !== null ? `, ${fmt(legal.excessDb, 'dB')} too much` : ''}. ${legal.warnings[0] ?? ''}`);
  verdict.classList.add('gateway-legal');
  return h(
    'div',
    { class: 'gateway-check' },
    h(
      'dl',
      { class: 'facts' },
      h('dt', {}, 'Transmit power'),
      h('dd', {}, fmt(check.txPowerDbm, 'dBm')),
      h('dt', {}, 'Antenna'),
      h('dd', {}, `${check.antennaName}, ${fmt(check.antennaGainDbi, 'dBi')}`),
      h('dt', {}, 'Feedline and connectors'),
      h('dd', {}, `${check.feedlineName ?? 'none'} · ${fmt(check.lossesDb, 'dB')} lost`),
      h('dt', {}, 'Peak EIRP'),
      h('dd', { class: 'gateway-eirp' }, `${fmt(check.peakEirpDbm, 'dBm')} (${fmt(check.peakErpDbm, 'dBm')} ERP)`),
    ),
    verdict,
    cautionGroups(check.cautions, check.cautionsFooter),
  );
}

/** Live check under the gateway edit form: re-asked (debounced) whenever power, antenna, feedline or height change. */
export function liveGatewayCheck(planId: string, read: () => GatewayKitDraft | null): { element: HTMLElement; refresh: () => void } {
  const element = h('div', { id: 'gateway-live-check', 'aria-live': 'polite' });
  let timer = 0;
  let controller: AbortController | null = null;
  const refresh = (): void => {
    window.clearTimeout(timer);
    timer = window.setTimeout(() => {
      const draft = read();
      if (!draft) return;
      controller?.abort();
      controller = new AbortController();
      previewGatewayCheck(planId, draft, controller.signal)
        .then((check) => element.replaceChildren(gatewayCheckBlock(check)))
        .catch((err: unknown) => {
          if (!isAbort(err)) element.replaceChildren(notice('error', `Could not check this kit: ${errorText(err)}`));
        });
    }, 250);
  };
  return { element, refresh };
}
