// earshot's status symbols and colours for files and paper, the same as the
// map's (web/src/symbols.ts; test/unit/report/style.test.ts keeps the two
// equal): shape AND colour carry the status so it reads in grey print and
// without colour vision. served = disc, marginal = diamond, unserved = downward
// triangle; gateways are black masts, sites green hexagons.
import { STATUS_WORDS, type LinkStatus } from '../planning/status.ts';

/** "Served (meets the target margin and delivery)": the words of server/planning/status.ts, as the map's legend shows them (web/src/status-words.ts). */
export function statusLabel(status: LinkStatus): string {
  return `${STATUS_WORDS[status].label} (${STATUS_WORDS[status].meaning})`;
}

export const STATUS_STYLE: Record<LinkStatus, { colour: string; label: string; shape: 'disc' | 'diamond' | 'triangle' }> = {
  served: { colour: '#1d5fa8', label: statusLabel('served'), shape: 'disc' },
  marginal: { colour: '#b86e00', label: statusLabel('marginal'), shape: 'diamond' },
  unserved: { colour: '#9c1c6b', label: statusLabel('unserved'), shape: 'triangle' },
};

export const GATEWAY_COLOUR = '#111111';
export const SITE_COLOUR = '#1e5b2a';

/** KML colours are aabbggrr. */
export function kmlColour(hex: string, alpha = 0xff): string {
  const r = hex.slice(1, 3);
  const g = hex.slice(3, 5);
  const b = hex.slice(5, 7);
  return `${alpha.toString(16).padStart(2, '0')}${b}${g}${r}`.toLowerCase();
}
