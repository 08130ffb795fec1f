// earshot's status symbols and colours for files and paper, the same as the
// map's (web/src/symbols.ts; test/unit/report/style.test.ts keeps the two
// equal): shape AND colour carry the status so it reads in grey print and
// without colour vision. served = disc, marginal = diamond, unserved = downward
// triangle; gateways are black masts, sites green hexagons.
import type { LinkStatus } from '../planning/status.ts';

export const STATUS_STYLE: Record<LinkStatus, { colour: string; label: string; shape: 'disc' | 'diamond' | 'triangle' }> = {
  served: { colour: '#1d5fa8', label: 'Served (target margin met)', shape: 'disc' },
  marginal: { colour: '#b86e00', label: 'Marginal (below target, still heard)', shape: 'diamond' },
  unserved: { colour: '#9c1c6b', label: 'Unserved (not heard)', shape: 'triangle' },
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
