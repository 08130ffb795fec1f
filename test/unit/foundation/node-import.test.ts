// CSV (RFC 4180) and GeoJSON (RFC 7946) parsing for the bulk node import.
import { describe, expect, it } from 'vitest';
import { importRecords, normaliseHeader, parseCsv, ImportFormatError } from '../../../server/api/node-import.ts';

const known = ['name', 'lat', 'lon', 'deviceType', 'antennaHeightAglM'];

describe('node import parsing', () => {
  it('RFC 4180 §2: quoted fields may hold commas, doubled quotes and line breaks; CRLF rows', () => {
    expect(parseCsv('a,b\r\n"x, y","say ""hi"""\r\n"two\nlines",3\r\n')).toEqual([
      ['a', 'b'],
      ['x, y', 'say "hi"'],
      ['two\nlines', '3'],
    ]);
    expect(() => parseCsv('a\n"open')).toThrow(ImportFormatError);
  });

  it('maps header spellings to field names', () => {
    expect(normaliseHeader('Device Type', known)).toBe('deviceType');
    expect(normaliseHeader('device_type', known)).toBe('deviceType');
    expect(normaliseHeader('Latitude', known)).toBe('lat');
    expect(normaliseHeader('lng', known)).toBe('lon');
    expect(normaliseHeader('ANTENNAHEIGHTAGLM', known)).toBe('antennaHeightAglM');
  });

  it('CSV numbers become numbers, blanks are omitted, text stays text', () => {
    expect(importRecords('name,lat,lon,deviceType\nA,44.5,-120,probe\nB,,x,probe\n', known)).toEqual([
      { name: 'A', lat: 44.5, lon: -120, deviceType: 'probe' },
      { name: 'B', lon: 'x', deviceType: 'probe' },
    ]);
  });

  it('GeoJSON Point coordinates are [lon, lat] (RFC 7946 §3.1.1)', () => {
    const records = importRecords({ type: 'FeatureCollection', features: [{ type: 'Feature', geometry: { type: 'Point', coordinates: [-120.5, 44.25] }, properties: { name: 'A', 'device type': 'probe' } }] }, known);
    expect(records).toEqual([{ name: 'A', deviceType: 'probe', lon: -120.5, lat: 44.25 }]);
    expect(() => importRecords({ type: 'Feature' }, known)).toThrow(/FeatureCollection/);
  });
});
