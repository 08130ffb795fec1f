// earshot's own map symbols. A node's status is carried by shape AND colour
// so it reads without colour vision: served = disc, marginal = diamond,
// unserved = downward triangle, not yet predicted = hollow square. The
// colours differ in lightness as well as hue (blue / amber / plum), and
// every symbol has a white halo so it stands out on the grey hillshade.

import type { LinkStatus } from './api.ts';

export type NodeClass = LinkStatus | 'unknown';

export const statusStyle: Record<NodeClass, { color: string; label: string; shape: string }> = {
  served: { color: '#1d5fa8', label: 'Served (target margin met)', shape: 'disc' },
  marginal: { color: '#b86e00', label: 'Marginal (below target, still heard)', shape: 'diamond' },
  unserved: { color: '#9c1c6b', label: 'Unserved (not heard)', shape: 'triangle' },
  unknown: { color: '#4a4a4a', label: 'Not predicted yet', shape: 'hollow square' },
};

/** SVG markup (a string, for Leaflet divIcons and legends) of a node symbol. */
export function nodeSymbolSvg(status: NodeClass, size = 18, selected = false): string {
  const c = statusStyle[status].color;
  const halo = selected ? '#000' : '#fff';
  const haloWidth = selected ? 3 : 2;
  let shape: string;
  switch (status) {
    case 'served':
      shape = `<circle cx="10" cy="10" r="6.5" fill="${c}" stroke="${halo}" stroke-width="${haloWidth}"/>`;
      break;
    case 'marginal':
      shape = `<polygon points="10,2.5 17.5,10 10,17.5 2.5,10" fill="${c}" stroke="${halo}" stroke-width="${haloWidth}"/>`;
      break;
    case 'unserved':
      shape = `<polygon points="2.5,4 17.5,4 10,17.5" fill="${c}" stroke="${halo}" stroke-width="${haloWidth}"/>`;
      break;
    default:
      shape =
        `<rect x="4" y="4" width="12" height="12" fill="#fff" stroke="${halo}" stroke-width="${haloWidth + 2}"/>` +
        `<rect x="4" y="4" width="12" height="12" fill="#fff" stroke="${c}" stroke-width="2.5"/>`;
  }
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${size}" height="${size}" viewBox="0 0 20 20" aria-hidden="true">${shape}</svg>`;
}

/** Gateway: a mast with two signal arcs, black on a white halo. */
export function gatewaySymbolSvg(size = 28): string {
  return (
    `<svg xmlns="http://www.w3.org/2000/svg" width="${size}" height="${size}" viewBox="0 0 28 28" aria-hidden="true">` +
    `<g fill="none" stroke="#fff" stroke-width="5" stroke-linecap="round"><path d="M14 9 L8 25 M14 9 L20 25 M10 20 H18"/>` +
    `<path d="M8 6 A8 8 0 0 0 8 14 M20 6 A8 8 0 0 1 20 14"/></g>` +
    `<g fill="none" stroke="#111" stroke-width="2.2" stroke-linecap="round"><path d="M14 9 L8 25 M14 9 L20 25 M10 20 H18"/>` +
    `<path d="M8 6 A8 8 0 0 0 8 14 M20 6 A8 8 0 0 1 20 14"/></g>` +
    `<circle cx="14" cy="9" r="3" fill="#111" stroke="#fff" stroke-width="1.5"/></svg>`
  );
}

/** Candidate site: a hexagon outline in deep green with a centre dot. */
export function siteSymbolSvg(size = 22): string {
  return (
    `<svg xmlns="http://www.w3.org/2000/svg" width="${size}" height="${size}" viewBox="0 0 22 22" aria-hidden="true">` +
    `<polygon points="11,2 19,6.5 19,15.5 11,20 3,15.5 3,6.5" fill="rgba(255,255,255,0.85)" stroke="#fff" stroke-width="4.5"/>` +
    `<polygon points="11,2 19,6.5 19,15.5 11,20 3,15.5 3,6.5" fill="rgba(255,255,255,0.85)" stroke="#1e5b2a" stroke-width="2.2"/>` +
    `<circle cx="11" cy="11" r="2.4" fill="#1e5b2a"/></svg>`
  );
}

export function symbolElement(svg: string, label: string): HTMLElement {
  const span = document.createElement('span');
  span.className = 'symbol';
  span.innerHTML = svg;
  span.setAttribute('role', 'img');
  span.setAttribute('aria-label', label);
  return span;
}

/** Margin (dB) against the plan's target → status class, for a live kit preview. */
export function classifyMargin(marginDb: number | null | undefined, targetMarginDb: number): NodeClass {
  if (marginDb === null || marginDb === undefined || !Number.isFinite(marginDb)) return 'unknown';
  if (marginDb >= targetMarginDb) return 'served';
  if (marginDb >= 0) return 'marginal';
  return 'unserved';
}
