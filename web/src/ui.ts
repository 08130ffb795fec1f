// Small DOM helpers shared by the views: an element builder, number formats
// that always carry their unit, an announcer for screen readers, and a modal
// dialog that keeps keyboard focus inside while open.

import { ApiError } from './api.ts';

type Child = Node | string | number | null | undefined | false;
type Attrs = Record<string, string | number | boolean | null | undefined | EventListener>;

/** Builds an element: h('button', { type: 'button', onclick: fn }, 'Save'). */
export function h<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Attrs = {}, ...children: Child[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  for (const [key, value] of Object.entries(attrs)) {
    if (value === null || value === undefined || value === false) continue;
    if (key.startsWith('on') && typeof value === 'function') {
      el.addEventListener(key.slice(2), value as EventListener);
    } else if (key === 'class') {
      el.className = String(value);
    } else if (value === true) {
      el.setAttribute(key, '');
    } else {
      el.setAttribute(key, String(value));
    }
  }
  append(el, ...children);
  return el;
}

export function append(el: Element, ...children: Child[]): void {
  for (const child of children) {
    if (child === null || child === undefined || child === false) continue;
    el.append(typeof child === 'number' ? String(child) : child);
  }
}

/** SVG element builder (namespace-aware). */
export function s(tag: string, attrs: Record<string, string | number> = {}, ...children: Array<SVGElement | string>): SVGElement {
  const el = document.createElementNS('http://www.w3.org/2000/svg', tag);
  for (const [key, value] of Object.entries(attrs)) el.setAttribute(key, String(value));
  for (const child of children) el.append(child);
  return el;
}

export function clear(el: Element): void {
  while (el.firstChild) el.removeChild(el.firstChild);
}

let idCounter = 0;
export function uid(prefix: string): string {
  idCounter += 1;
  return `${prefix}-${idCounter}`;
}

// ---------- numbers with units ----------

const dash = '–';
export function fmt(value: number | null | undefined, unit: string, digits = 1): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return dash;
  return `${value.toFixed(digits)} ${unit}`;
}
export const dbm = (v: number | null | undefined): string => fmt(v, 'dBm', 1);
export const db = (v: number | null | undefined): string => fmt(v, 'dB', 1);
export const metres = (v: number | null | undefined, digits = 1): string => fmt(v, 'm', digits);
export function distance(m: number | null | undefined): string {
  if (m === null || m === undefined || !Number.isFinite(m)) return dash;
  return m >= 1000 ? `${(m / 1000).toFixed(2)} km` : `${m.toFixed(0)} m`;
}
export function percent(p: number | null | undefined, digits = 1): string {
  if (p === null || p === undefined || !Number.isFinite(p)) return dash;
  return `${(p * 100).toFixed(digits)} %`;
}
export function money(v: number | null | undefined): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return dash;
  return `${v.toFixed(2)} USD`;
}
export function coords(lat: number, lon: number): string {
  const ns = lat >= 0 ? 'N' : 'S';
  const ew = lon >= 0 ? 'E' : 'W';
  return `${Math.abs(lat).toFixed(6)}° ${ns}, ${Math.abs(lon).toFixed(6)}° ${ew}`;
}

// ---------- announcements and notices ----------

export function announce(message: string): void {
  const region = document.getElementById('announcer');
  if (!region) return;
  region.textContent = '';
  // A fresh text node so repeated identical messages are read again.
  window.setTimeout(() => {
    region.textContent = message;
  }, 30);
}

/** A notice box: kind decides the colour and the icon word, never colour alone. */
export function notice(kind: 'info' | 'warn' | 'error' | 'ok', ...content: Child[]): HTMLElement {
  const word = { info: 'Note', warn: 'Caution', error: 'Problem', ok: 'Done' }[kind];
  return h('div', { class: `notice notice-${kind}`, role: kind === 'error' ? 'alert' : 'note' }, h('strong', {}, `${word}: `), ...content);
}

export function errorText(err: unknown): string {
  if (err instanceof ApiError && err.notAvailable) return 'not available on this server yet';
  if (err instanceof Error) return err.message;
  return String(err);
}

// ---------- modal dialog ----------

export interface Dialog {
  root: HTMLDialogElement;
  body: HTMLElement;
  close(): void;
}

/** Opens a native <dialog> (focus trap and Esc handled by the browser). */
export function openDialog(title: string, build: (body: HTMLElement, close: () => void) => void): Dialog {
  const titleId = uid('dlg-title');
  const body = h('div', { class: 'dialog-body' });
  const root = h('dialog', { class: 'dialog', 'aria-labelledby': titleId });
  const close = (): void => {
    root.close();
    root.remove();
  };
  const header = h(
    'header',
    { class: 'dialog-header' },
    h('h2', { id: titleId }, title),
    h('button', { type: 'button', class: 'icon-button', 'aria-label': 'Close dialog', onclick: close }, '×'),
  );
  root.append(header, body);
  root.addEventListener('close', () => root.remove());
  document.body.append(root);
  build(body, close);
  root.showModal();
  return { root, body, close };
}

/** A labelled form field. Returns the wrapper; the control keeps its own id. */
export function field(label: string, control: HTMLElement, hint?: string): HTMLElement {
  const id = control.id || uid('f');
  control.id = id;
  const hintId = hint ? `${id}-hint` : undefined;
  if (hintId) control.setAttribute('aria-describedby', hintId);
  return h('div', { class: 'field' }, h('label', { for: id }, label), control, hint ? h('span', { class: 'hint', id: hintId }, hint) : null);
}

export function select(options: Array<{ value: string; label: string }>, value: string | null | undefined, attrs: Attrs = {}): HTMLSelectElement {
  const el = h('select', attrs);
  for (const option of options) {
    const opt = h('option', { value: option.value }, option.label);
    if (option.value === value) opt.selected = true;
    el.append(opt);
  }
  return el;
}

export const safetyCautions = [
  'Work at height: use a rated ladder or lift, a second person on site and fall protection where required; never climb in wind, ice or lightning weather.',
  'Grounding and lightning: bond the mast and the coax shield to a proper earth and fit a surge arrester where the feedline enters a building.',
  'RF exposure: keep people out of the area right in front of a transmitting antenna; keep the antenna above head height.',
  'Local codes and permits: mast height, roof work and radio power limits are set by local building codes and the radio regulator; follow them and licensed practice.',
];

/** The server's cautions for this plan's band when given; else the general list above. */
export function cautionsBlock(fromServer: readonly string[] = []): HTMLElement {
  const list = fromServer.length > 0 ? fromServer : safetyCautions;
  return h(
    'section',
    { class: 'cautions', 'aria-label': 'Safety cautions' },
    h('h3', {}, '⚠ Safety before mast work'),
    h('ul', {}, ...list.map((c) => h('li', {}, c))),
  );
}

/** Drops the null/false entries of a list of children (for native append/replaceChildren). */
export function present<T>(...items: Array<T | null | undefined | false>): T[] {
  return items.filter((item): item is T => item !== null && item !== undefined && item !== false);
}

/** A server timestamp in the viewer's own time zone and locale ("2 Dec 2026, 14:05"), never raw ISO. */
export function localTime(value: string | Date | null | undefined): string {
  if (value === null || value === undefined || value === '') return '–';
  const date = value instanceof Date ? value : new Date(value);
  if (Number.isNaN(date.getTime())) return '–';
  return date.toLocaleString(undefined, { year: 'numeric', month: 'short', day: 'numeric', hour: '2-digit', minute: '2-digit' });
}
