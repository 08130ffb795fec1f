// The plan as map features, for GeoJSON (RFC 7946) and KML (OGC 12-007r2):
// one feature per node, gateway and site, with `id` and `kind` first. Both
// writers yield text in pieces so a large fleet streams.
import type { LinkStatus } from '../planning/status.ts';
import { GATEWAY_COLOUR, kmlColour, SITE_COLOUR, STATUS_STYLE } from './style.ts';

export type FeatureKind = 'node' | 'gateway' | 'site';

export interface PlanFeature {
  kind: FeatureKind;
  id: string;
  name: string;
  lat: number;
  lon: number;
  /** Node status (nodes only). */
  status?: LinkStatus;
  /** Flat properties: numbers, strings, booleans or null. */
  properties: Record<string, string | number | boolean | null>;
}

/** RFC 7946 §3.3 FeatureCollection, positions [longitude, latitude] (§3.1.1), WGS 84 (§4). */
export function* geoJsonChunks(name: string, features: Iterable<PlanFeature>, batch = 200): Generator<string> {
  yield `{"type":"FeatureCollection","name":${JSON.stringify(name)},"features":[`;
  let chunk = '';
  let n = 0;
  for (const f of features) {
    const feature = { type: 'Feature', id: f.id, geometry: { type: 'Point', coordinates: [f.lon, f.lat] }, properties: { id: f.id, kind: f.kind, name: f.name, ...f.properties } };
    chunk += (n > 0 ? ',' : '') + JSON.stringify(feature);
    if (++n % batch === 0) {
      yield chunk;
      chunk = '';
    }
  }
  yield `${chunk}]}\n`;
}

/** XML text escaping (XML 1.0 §2.4) with control characters other than tab/LF/CR dropped (not allowed in XML 1.0). */
export function xmlText(value: string): string {
  // eslint-disable-next-line no-control-regex
  return value.replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f]/g, '').replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

const FOLDER_NAMES: Record<FeatureKind, string> = { node: 'Nodes', gateway: 'Gateways', site: 'Sites' };

function styleId(f: PlanFeature): string {
  if (f.kind === 'node') return `node-${f.status ?? 'unserved'}`;
  return f.kind;
}

function styles(): string {
  const iconStyle = (id: string, colour: string, scale: number) =>
    `<Style id="${id}"><IconStyle><color>${kmlColour(colour)}</color><scale>${scale}</scale></IconStyle><LabelStyle><scale>0.7</scale></LabelStyle></Style>`;
  return [
    ...(Object.keys(STATUS_STYLE) as LinkStatus[]).map((status) => iconStyle(`node-${status}`, STATUS_STYLE[status].colour, 0.9)),
    iconStyle('gateway', GATEWAY_COLOUR, 1.3),
    iconStyle('site', SITE_COLOUR, 1.1),
  ].join('');
}

/** KML 2.2 document: shared styles (our status colours), one Folder per kind, a Placemark per feature with ExtendedData. */
export function* kmlChunks(name: string, features: Iterable<PlanFeature>, batch = 200): Generator<string> {
  yield `<?xml version="1.0" encoding="UTF-8"?>\n<kml xmlns="http://www.opengis.net/kml/2.2"><Document><name>${xmlText(name)}</name>${styles()}`;
  const byKind: Record<FeatureKind, PlanFeature[]> = { node: [], gateway: [], site: [] };
  for (const f of features) byKind[f.kind].push(f);
  for (const kind of ['site', 'gateway', 'node'] as const) {
    let chunk = `<Folder><name>${FOLDER_NAMES[kind]}</name>`;
    let n = 0;
    for (const f of byKind[kind]) {
      const data = Object.entries({ id: f.id, kind: f.kind, ...f.properties })
        .map(([key, value]) => `<Data name="${xmlText(key)}"><value>${value === null ? '' : xmlText(String(value))}</value></Data>`)
        .join('');
      chunk += `<Placemark id="${xmlText(`${f.kind}-${f.id}`)}"><name>${xmlText(f.name)}</name><styleUrl>#${styleId(f)}</styleUrl><ExtendedData>${data}</ExtendedData><Point><coordinates>${f.lon},${f.lat}</coordinates></Point></Placemark>`;
      if (++n % batch === 0) {
        yield chunk;
        chunk = '';
      }
    }
    yield `${chunk}</Folder>`;
  }
  yield '</Document></kml>\n';
}
