// Our proj4 definitions (server/terrain/crs.ts, written as data from memory of the EPSG parameters) against
// GDAL/PROJ's own EPSG database through gdaltransform: WGS 84 lon/lat → the CRS at a point inside its area.
import { expect, it } from 'vitest';
import { crsForEpsg, knownEpsgCodes, transformForCrs, UnsupportedCrsError } from '../../server/terrain/crs.ts';
import { describeWithGdal, gdal } from '../unit/terrain/gdal-helper.ts';

// A WGS 84 point inside each CRS's area of use.
function pointFor(epsg: number): [number, number] {
  const zoneCentre = (zone: number) => -183 + 6 * zone;
  if (epsg >= 32601 && epsg <= 32660) return [zoneCentre(epsg - 32600) + 1.3, 45.2];
  if (epsg >= 32701 && epsg <= 32760) return [zoneCentre(epsg - 32700) - 1.1, -33.7];
  if (epsg >= 26901 && epsg <= 26923) return [zoneCentre(epsg - 26900) + 0.7, 48.5];
  if (epsg >= 25828 && epsg <= 25838) return [zoneCentre(epsg - 25800) + 0.9, 52.1];
  if (epsg >= 28348 && epsg <= 28358) return [zoneCentre(epsg - 28300) + 0.5, -25.3];
  if (epsg >= 7846 && epsg <= 7859) return [zoneCentre(epsg - 7800) - 0.6, -30.2];
  const fixed: Record<number, [number, number]> = {
    4326: [6.1, 49.8], 4269: [-100.2, 40.1], 4258: [10.5, 51.2], 4283: [133.8, -25.1], 7844: [133.8, -25.1], 4167: [174.7, -41.3],
    3857: [6.1, 49.8], 27700: [-1.55, 52.6], 2154: [2.35, 46.9], 3035: [12.4, 48.1], 28992: [5.3, 52.1], 2056: [7.6, 46.8],
    5070: [-97.3, 38.8], 2193: [174.8, -41.2], 3067: [25.1, 62.4],
  };
  return fixed[epsg];
}

// Datum shifts by 7-parameter Helmert (towgs84) may differ from the transformation PROJ picks (grids, other
// parameter sets): metres, not millimetres. Everything else must agree to 1 mm.
const HELMERT_SHIFTED = new Set([27700, 28992, 2056]);

describeWithGdal('proj4 definitions against GDAL/PROJ (gdaltransform -s_srs EPSG:4326 -t_srs EPSG:n)', () => {
  // Every national grid and every 5th code of the zone families (gdaltransform starts in ~0.2 s, so not all 188).
  const national = new Set([3857, 27700, 2154, 3035, 28992, 2056, 5070, 2193, 3067]);
  const codes = knownEpsgCodes().filter((code, i) => crsForEpsg(code).kind === 'projected' && (national.has(code) || i % 5 === 0));

  it(`${codes.length} projected EPSG codes: forward transform agrees with PROJ (1 mm; 3 m for Helmert-shifted national grids)`, () => {
    const differences: string[] = [];
    let worstPlainM = 0;
    const helmert: string[] = [];
    for (const epsg of codes) {
      const [lon, lat] = pointFor(epsg);
      const [x, y] = transformForCrs(crsForEpsg(epsg)).forward(lon, lat);
      const out = gdal('gdaltransform', ['-s_srs', 'EPSG:4326', '-t_srs', `EPSG:${epsg}`], `${lon} ${lat}\n`).trim().split(/\s+/).map(Number);
      const errorM = Math.hypot(x - out[0], y - out[1]);
      const limit = HELMERT_SHIFTED.has(epsg) ? 3 : 0.001;
      if (!HELMERT_SHIFTED.has(epsg)) worstPlainM = Math.max(worstPlainM, errorM);
      else helmert.push(`EPSG:${epsg} ${errorM.toFixed(3)} m`);
      if (!(errorM <= limit)) differences.push(`EPSG:${epsg}: ${errorM.toFixed(4)} m`);
    }
    expect(differences).toEqual([]);
    expect(worstPlainM).toBeLessThan(0.001);
    console.info(`proj4 vs PROJ over ${codes.length} codes: worst ${(worstPlainM * 1000).toFixed(3)} mm (Helmert-shifted: ${helmert.join(', ')})`);
  });

  it('geographic codes are taken as WGS 84 lon/lat; PROJ agrees within 2 m (null or ballpark datum shifts)', () => {
    for (const epsg of knownEpsgCodes().filter((code) => crsForEpsg(code).kind === 'geographic')) {
      const [lon, lat] = pointFor(epsg);
      const out = gdal('gdaltransform', ['-s_srs', 'EPSG:4326', '-t_srs', `EPSG:${epsg}`], `${lon} ${lat}\n`).trim().split(/\s+/).map(Number);
      const metres = Math.hypot((out[0] - lon) * 111320 * Math.cos((lat * Math.PI) / 180), (out[1] - lat) * 110574);
      expect(metres, `EPSG:${epsg}`).toBeLessThan(2);
    }
  });
});

it('an EPSG code outside the table is refused with an error naming it', () => {
  expect(() => crsForEpsg(31467)).toThrow(UnsupportedCrsError);
  expect(() => crsForEpsg(31467)).toThrow(/EPSG:31467/);
});
