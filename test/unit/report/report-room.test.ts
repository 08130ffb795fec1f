// The report room's pure pieces: CSV quoting (RFC 4180 §2) and formula
// neutralising (common practice), the bill of materials (hand sums), Web
// Mercator placement (EPSG:3857 spherical formulas), the status palette shared
// with the map, XML escaping (XML 1.0 §2.4) and scenario node pairing.
import { readFileSync } from 'node:fs';
import { deflateSync } from 'node:zlib';
import { crc32, decodePng, encodePng } from '../../../server/terrain/png.ts';
import { describe, expect, it } from 'vitest';
import { csvField, csvLines, csvRecord } from '../../../server/report/csv.ts';
import { billOfMaterials, type PricedEnd } from '../../../server/report/bom.ts';
import { kitPrice } from '../../../server/planning/kit-price.ts';
import { composeMapImage, fitView, lonLatToGlobalPx, paddedBox, viewPx } from '../../../server/report/map.ts';
import { geoJsonChunks, kmlChunks, xmlText } from '../../../server/report/features.ts';
import { kmlColour, STATUS_STYLE } from '../../../server/report/style.ts';
import { mercatorPixelToLonLat } from '../../../server/terrain/hillshade.ts';
import { kitCostUsd } from '../../../server/planning/recommend.ts';
import { pairNodes } from '../../../server/app/scenarios.ts';
import type { NodeFigure } from '../../../server/app/plan-figures.ts';

describe('CSV (RFC 4180 §2)', () => {
  it('quotes fields with commas, quotes or line breaks and doubles inner quotes (§2 rules 5–7)', () => {
    expect(csvField('plain')).toBe('plain');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('two\nlines')).toBe('"two\nlines"');
    expect(csvRecord(['x', 1.5, null, true])).toBe('x,1.5,,true\r\n');
  });
  it('neutralises text a spreadsheet would run as a formula (common practice), numbers stay numbers', () => {
    expect(csvField('=HYPERLINK("http://x")')).toBe(`"'=HYPERLINK(""http://x"")"`);
    expect(csvField('+1')).toBe("'+1");
    expect(csvField('-2+3')).toBe("'-2+3");
    expect(csvField('@SUM(A1)')).toBe("'@SUM(A1)");
    expect(csvField('\tx')).toBe("'\tx");
    expect(csvField(-12.5)).toBe('-12.5');
    expect(csvField(Number.NaN)).toBe('');
  });
  it('streams a header and one record per row', () => {
    const text = [...csvLines([{ header: 'n', value: (r: number) => r }], [1, 2, 3], 2)].join('');
    expect(text).toBe('n\r\n1\r\n2\r\n3\r\n');
  });
});

describe('bill of materials', () => {
  // Every end arrives priced by the one kit price (server/planning/kit-price.ts); the bill only sums it.
  const whip = { name: 'Whip', costUsd: 10 };
  const coax = { name: 'Coax', costUsdPerM: 2.5 };
  const pair = { name: 'N pair', costUsd: 12 };
  const n1 = kitPrice({ antenna: whip, mast: null, feedline: null, feedlineLengthM: 0, connectors: [] });
  const n2 = kitPrice({ antenna: whip, mast: { name: 'Pole', costUsd: 70 }, feedline: coax, feedlineLengthM: 4, connectors: [{ ...pair, count: 2 }] });
  const n3 = kitPrice({ antenna: { name: 'Ghost', costUsd: 0 }, mast: null, feedline: null, feedlineLengthM: 0, connectors: [{ name: 'Odd plug', costUsd: undefined, count: 1 }] });
  const g1 = kitPrice({ antenna: { name: 'Collinear', costUsd: 100 }, mast: null, feedline: coax, feedlineLengthM: 20, connectors: [{ ...pair, count: 2 }, { name: 'Arrestor', costUsd: 45, count: 1 }] });
  const ends: PricedEnd[] = [
    { kind: 'node', id: 'n1', name: 'N1', price: n1 },
    { kind: 'node', id: 'n2', name: 'N2', price: n2 },
    { kind: 'node', id: 'n3', name: 'N3', price: n3 },
    { kind: 'gateway', id: 'g1', name: 'G1', price: g1, siteId: 's1' },
  ];
  const bom = billOfMaterials(ends, { gatewayUnitCostUsd: 600, sites: [{ id: 's1', name: 'Silo', costUsd: 400 }, { id: 's2', name: 'Unused', costUsd: 999 }] });
  it('sums by hand: nodes 10 + (10 + 70 + 2.5·4 + 2·12) + 0 = 124, gateway 100 + 2.5·20 + 2·12 + 45 = 219 USD', () => {
    expect(n2.totalUsd).toBe(kitCostUsd(10, 70, 2.5, 4) + 24);
    expect(bom.nodeKitCostUsd).toBe(124);
    expect(bom.gatewayKitCostUsd).toBe(219);
    expect(bom.kitCostUsd).toBe(343);
    expect(bom.totalsUsd.connector).toBe(4 * 12 + 45);
    expect(bom.totalsUsd.gateway).toBe(600);
    expect(bom.totalsUsd.site).toBe(400);
    expect(bom.totalUsd).toBe(343 + 600 + 400);
  });
  it('lists items by name, one line per catalog item, quantities summed', () => {
    expect(bom.lines.find((l) => l.name === 'Coax')).toMatchObject({ category: 'feedline', quantity: 24, unit: 'm', unitCostUsd: 2.5, costUsd: 60 });
    expect(bom.lines.find((l) => l.name === 'Whip')).toMatchObject({ category: 'antenna', quantity: 2, unitCostUsd: 10, costUsd: 20 });
    expect(bom.lines.find((l) => l.name === 'N pair')).toMatchObject({ category: 'connector', quantity: 4, costUsd: 48 });
    expect(bom.lines.map((l) => l.name)).not.toContain('Site works: Unused');
    expect(bom.unpriced).toEqual(['Odd plug']);
  });
  it('equals the sum of the line costs (nothing priced twice or dropped)', () => {
    const sum = bom.lines.reduce((acc, l) => acc + l.costUsd, 0);
    expect(Math.round(sum * 100) / 100).toBe(bom.totalUsd);
  });
});

describe('map placement (Web Mercator, EPSG:3857 spherical)', () => {
  it('puts (0°, 0°) at the centre of the zoom-0 tile and inverts the terrain room’s pixel → lon/lat', () => {
    expect(lonLatToGlobalPx(0, 0, 0)).toEqual({ x: 128, y: 128 });
    for (const [lon, lat, z] of [[-118.16, 44.3, 13], [151.2, -33.9, 10], [10, 60, 5]]) {
      const p = lonLatToGlobalPx(lon, lat, z);
      const back = mercatorPixelToLonLat(p.x, p.y, z);
      expect(back.lon).toBeCloseTo(lon, 9);
      expect(back.lat).toBeCloseTo(lat, 9);
    }
  });
  it('fits the box in the view at the deepest zoom where it spans at most 1.5 × the frame, at the frame’s aspect', () => {
    const box = paddedBox([{ lat: 44.25, lon: -118.2 }, { lat: 44.35, lon: -118.05 }])!;
    const view = fitView(box, 990, 1000);
    expect(view.widthPx / view.heightPx).toBeCloseTo(0.99, 2);
    for (const corner of [{ lat: box.north, lon: box.west }, { lat: box.south, lon: box.east }]) {
      const p = viewPx(view, corner.lat, corner.lon);
      expect(p.x).toBeGreaterThanOrEqual(0);
      expect(p.x).toBeLessThanOrEqual(view.widthPx);
      expect(p.y).toBeGreaterThanOrEqual(0);
      expect(p.y).toBeLessThanOrEqual(view.heightPx);
    }
    expect(view.widthPx).toBeLessThanOrEqual(990 * 1.5 + 1);
    const nw = lonLatToGlobalPx(box.west, box.north, view.zoom + 1);
    const se = lonLatToGlobalPx(box.east, box.south, view.zoom + 1);
    expect(se.x - nw.x > 990 * 1.5 || se.y - nw.y > 1000 * 1.5).toBe(true);
  });
});

describe('features and palette', () => {
  it('status colours are the map’s (web/src/symbols.ts)', () => {
    const web = readFileSync(new URL('../../../web/src/symbols.ts', import.meta.url), 'utf8');
    for (const [status, style] of Object.entries(STATUS_STYLE)) {
      expect(web).toMatch(new RegExp(`${status}: \\{ color: '${style.colour}', label: '${style.label.replace(/[()]/g, '\\$&')}', shape: '${style.shape}'`));
    }
    expect(kmlColour('#1d5fa8')).toBe('ffa85f1d');
  });
  it('escapes XML text (XML 1.0 §2.4) and drops characters XML 1.0 forbids', () => {
    expect(xmlText('a<b & "c"\u0001')).toBe('a&lt;b &amp; &quot;c&quot;');
  });
  it('GeoJSON positions are [lon, lat] (RFC 7946 §3.1.1); KML coordinates lon,lat', () => {
    const f = [{ kind: 'node' as const, id: 'n', name: 'N <1>', lat: 44.5, lon: -118.25, status: 'served' as const, properties: { status: 'served' } }];
    const json = JSON.parse([...geoJsonChunks('x', f)].join(''));
    expect(json.features[0].geometry.coordinates).toEqual([-118.25, 44.5]);
    expect(json.features[0].properties).toMatchObject({ id: 'n', kind: 'node', status: 'served' });
    const kml = [...kmlChunks('x', f)].join('');
    expect(kml).toContain('<coordinates>-118.25,44.5</coordinates>');
    expect(kml).toContain('<name>N &lt;1&gt;</name>');
    expect(kml).toContain('<styleUrl>#node-served</styleUrl>');
  });
});

describe('scenario node pairing', () => {
  const node = (id: string, name: string, originId: string | null = null): NodeFigure => ({ id, originId, name, status: 'served', bestMarginDb: 10 } as NodeFigure);
  it('pairs by copy lineage first, then by a name unique on both sides', () => {
    const a = [node('a1', 'Probe'), node('a2', 'Dup'), node('a3', 'Dup'), node('a4', 'Tank')];
    const b = [node('b1', 'Probe renamed', 'a1'), node('b4', 'Tank'), node('b5', 'Dup'), node('b9', 'New')];
    const pairs = pairNodes(a, b);
    const byA = new Map(pairs.map((p) => [p.idA, p.idB]));
    expect(byA.get('a1')).toBe('b1');
    expect(byA.get('a4')).toBe('b4');
    expect(byA.get('a2')).toBeNull();
    expect(byA.get('a3')).toBeNull();
    expect(pairs.filter((p) => p.idA === null).map((p) => p.idB).sort()).toEqual(['b5', 'b9']);
  });
});

describe('PNG decoding (PNG spec §9.2 filters) and the composited map image', () => {
  // A PNG built here with a chosen filter per row, by the spec's forward definitions.
  function pngWithFilters(w: number, hPx: number, channels: number, colourType: number, pixels: Uint8Array, filters: number[]): Uint8Array {
    const stride = w * channels;
    const raw = new Uint8Array((stride + 1) * hPx);
    for (let y = 0; y < hPx; y++) {
      const f = filters[y % filters.length];
      raw[y * (stride + 1)] = f;
      for (let i = 0; i < stride; i++) {
        const x = pixels[y * stride + i];
        const a = i >= channels ? pixels[y * stride + i - channels] : 0;
        const b = y > 0 ? pixels[(y - 1) * stride + i] : 0;
        const c = y > 0 && i >= channels ? pixels[(y - 1) * stride + i - channels] : 0;
        const p = a + b - c;
        const paeth = Math.abs(p - a) <= Math.abs(p - b) && Math.abs(p - a) <= Math.abs(p - c) ? a : Math.abs(p - b) <= Math.abs(p - c) ? b : c;
        const pred = [0, a, b, Math.floor((a + b) / 2), paeth][f];
        raw[y * (stride + 1) + 1 + i] = (x - pred) & 0xff;
      }
    }
    const chunk = (type: string, data: Uint8Array) => {
      const out = Buffer.alloc(12 + data.length);
      out.writeUInt32BE(data.length, 0);
      out.write(type, 4, 'latin1');
      Buffer.from(data).copy(out, 8);
      out.writeUInt32BE(crc32(out, 4, 8 + data.length), 8 + data.length);
      return out;
    };
    const ihdr = Buffer.alloc(13);
    ihdr.writeUInt32BE(w, 0);
    ihdr.writeUInt32BE(hPx, 4);
    ihdr[8] = 8;
    ihdr[9] = colourType;
    return Buffer.concat([Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), chunk('IHDR', ihdr), chunk('IDAT', deflateSync(raw)), chunk('IEND', new Uint8Array(0))]);
  }
  it('undoes None, Sub, Up, Average and Paeth rows, and round-trips encodePng in every colour type', () => {
    const w = 7;
    const hPx = 10;
    const pixels = Uint8Array.from({ length: w * hPx * 3 }, (_, i) => (i * 37 + (i >> 3) * 11) & 0xff);
    const decoded = decodePng(pngWithFilters(w, hPx, 3, 2, pixels, [0, 1, 2, 3, 4]));
    expect(decoded).toMatchObject({ widthPx: w, heightPx: hPx, colour: 'rgb' });
    expect(Buffer.from(decoded.pixels).equals(Buffer.from(pixels))).toBe(true);
    for (const [colour, channels] of [['grey', 1], ['grey-alpha', 2], ['rgb', 3], ['rgba', 4]] as const) {
      const px = Uint8Array.from({ length: w * hPx * channels }, (_, i) => (i * 53) & 0xff);
      expect(Buffer.from(decodePng(encodePng(w, hPx, px, colour)).pixels).equals(Buffer.from(px)), colour).toBe(true);
    }
  });
  it('composes hillshade under margin colours into one opaque RGB image of the view', () => {
    const view = { zoom: 1, x0: 0, y0: 0, widthPx: 300, heightPx: 260 };
    const shade = new Uint8Array(256 * 256 * 2);
    for (let k = 0; k < 256 * 256; k++) {
      shade[2 * k] = 200;
      shade[2 * k + 1] = 255;
    }
    const margin = new Uint8Array(256 * 256 * 4);
    margin.set([16, 48, 122, 255], 0); // pixel (0, 0) opaque dark blue
    const image = decodePng(composeMapImage(view, [{ x: 0, y: 0, hillshadePng: encodePng(256, 256, shade, 'grey-alpha'), marginPng: encodePng(256, 256, margin, 'rgba') }]));
    expect(image.colour).toBe('rgb');
    expect([...image.pixels.subarray(0, 3)]).toEqual([16, 48, 122]);
    const grey = 70 + Math.round(200 * 0.72);
    expect([...image.pixels.subarray(3, 6)]).toEqual([grey, grey, grey]);
    const outside = (10 * 300 + 280) * 3; // x = 280 lies beyond the one tile: paper grey
    expect([...image.pixels.subarray(outside, outside + 3)]).toEqual([0xf4, 0xf4, 0xf4]);
  });
});
