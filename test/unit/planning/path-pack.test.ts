// The packed path of the Link cache (server/planning/path-pack.ts) reads back
// exactly the path that was packed, for every propagation method (doubles kept
// bit for bit, NaN included, where JSON would store null), with warnings, and
// in a fraction of the JSON's bytes; a path the layout cannot hold is not
// packed (the cache keeps it as JSON). Paths: smooth earth, our own ends.
import { describe, expect, it } from 'vitest';
import { computeLinkPath, type LinkPathSettings } from '../../../server/planning/link-path.ts';
import { DEFAULT_PATH_SETTINGS, pathAtPlace, type PathPrediction } from '../../../server/planning/path.ts';
import { packPath, unpackPath } from '../../../server/planning/path-pack.ts';
import { PATH_METHODS } from '../../../server/propagation/path-request.ts';

const node = { lat: 45.1, lon: 7.3, antennaHeightAglM: 1.5 };
const gateway = { lat: 45.16, lon: 7.37, antennaHeightAglM: 24 };

function settingsFor(method: (typeof PATH_METHODS)[number]): LinkPathSettings {
  return { path: { ...DEFAULT_PATH_SETTINGS, method, frequencyMhz: 868 }, profileStepM: null, profileInterpolation: 'bilinear' };
}

describe('packed path', () => {
  for (const method of PATH_METHODS) {
    it(`${method}: unpack(pack(path)) equals the path, in under half the bytes of its JSON`, async () => {
      const path = await computeLinkPath(null, settingsFor(method), node, gateway);
      const bytes = packPath(path);
      expect(bytes).not.toBeNull();
      const back = unpackPath(bytes!);
      expect(back).toEqual(path);
      // Bit for bit: the same doubles, not just close ones.
      for (const key of Object.keys(path.terms)) expect(Object.is(back.terms[key], path.terms[key])).toBe(true);
      expect(Object.is(back.basicLossDb, path.basicLossDb)).toBe(true);
      expect(bytes!.byteLength).toBeLessThan(JSON.stringify(path).length / 2);
    });
  }

  it('keeps NaN (a place path has no Fresnel clearance), warnings and line of sight', () => {
    const place = pathAtPlace({ method: 'p1812', basicLossDb: 131.25, freeSpaceLossDb: 101.5, distanceM: 4200, nodeGroundM: 210, gatewayGroundM: 340, nodeAntennaHeightAglM: 0.5, gatewayAntennaHeightAglM: 30, nodeAzimuthDeg: 12.5, gatewayAzimuthDeg: 192.5, deltaN: 45, nodeClutterHeightM: 0 });
    const path: PathPrediction = { ...place, lineOfSight: true, warnings: ['node antenna 0.5 m above ground is taken as 1 m — ünïcode ✓'] };
    const back = unpackPath(packPath(path)!);
    expect(Number.isNaN(back.fresnelClearanceRatio)).toBe(true);
    expect(back).toEqual(path);
    expect(JSON.parse(JSON.stringify(path)).fresnelClearanceRatio).toBeNull();
  });

  it('a term or method the layout does not know is not packed', async () => {
    const path = await computeLinkPath(null, settingsFor('p1812'), node, gateway);
    expect(packPath({ ...path, terms: { ...path.terms, someNewTermDb: 1 } })).toBeNull();
    expect(packPath({ ...path, method: 'ray-tracing' as PathPrediction['method'] })).toBeNull();
  });

  it('refuses bytes of another layout', () => {
    expect(() => unpackPath(new Uint8Array(10))).toThrow(RangeError);
  });
});
