// Coordinate reference systems we can read, by EPSG code, as proj4 definition
// strings written here as data (from memory of the EPSG registry's
// parameters; each is checked against GDAL/PROJ in test/reference/terrain-crs.test.ts).
// Anything else is refused with an error naming the code, so a DEM is never
// silently misplaced.
import proj4 from 'proj4';

export type CrsKind = 'geographic' | 'projected';

export interface CrsInfo {
  epsg: number;
  kind: CrsKind;
  /** proj4 definition string. */
  proj4: string;
  name: string;
}

/** Raised when a CRS is not in our table (or is user-defined). */
export class UnsupportedCrsError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'UnsupportedCrsError';
  }
}

const GRS80_NULL_SHIFT = '+ellps=GRS80 +towgs84=0,0,0,0,0,0,0';

const GEOGRAPHIC: Record<number, { name: string; proj4: string }> = {
  4326: { name: 'WGS 84', proj4: '+proj=longlat +datum=WGS84 +no_defs' },
  4269: { name: 'NAD83', proj4: '+proj=longlat +datum=NAD83 +no_defs' },
  4258: { name: 'ETRS89', proj4: `+proj=longlat ${GRS80_NULL_SHIFT} +no_defs` },
  4283: { name: 'GDA94', proj4: `+proj=longlat ${GRS80_NULL_SHIFT} +no_defs` },
  7844: { name: 'GDA2020', proj4: `+proj=longlat ${GRS80_NULL_SHIFT} +no_defs` },
  4167: { name: 'NZGD2000', proj4: `+proj=longlat ${GRS80_NULL_SHIFT} +no_defs` },
};

// National grids (not zone families), proj4 strings as data.
const NATIONAL: Record<number, { name: string; proj4: string }> = {
  3857: {
    name: 'WGS 84 / Pseudo-Mercator',
    proj4: '+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +wktext +no_defs',
  },
  27700: {
    name: 'OSGB36 / British National Grid',
    proj4: '+proj=tmerc +lat_0=49 +lon_0=-2 +k=0.9996012717 +x_0=400000 +y_0=-100000 +ellps=airy +towgs84=446.448,-125.157,542.06,0.15,0.247,0.842,-20.489 +units=m +no_defs',
  },
  2154: {
    name: 'RGF93 v1 / Lambert-93',
    proj4: `+proj=lcc +lat_0=46.5 +lon_0=3 +lat_1=49 +lat_2=44 +x_0=700000 +y_0=6600000 ${GRS80_NULL_SHIFT} +units=m +no_defs`,
  },
  3035: {
    name: 'ETRS89-extended / LAEA Europe',
    proj4: `+proj=laea +lat_0=52 +lon_0=10 +x_0=4321000 +y_0=3210000 ${GRS80_NULL_SHIFT} +units=m +no_defs`,
  },
  28992: {
    name: 'Amersfoort / RD New',
    proj4: '+proj=sterea +lat_0=52.1561605555556 +lon_0=5.38763888888889 +k=0.9999079 +x_0=155000 +y_0=463000 +ellps=bessel +towgs84=565.417,50.3319,465.552,-0.398957,0.343988,-1.8774,4.0725 +units=m +no_defs',
  },
  2056: {
    name: 'CH1903+ / LV95',
    proj4: '+proj=somerc +lat_0=46.9524055555556 +lon_0=7.43958333333333 +k_0=1 +x_0=2600000 +y_0=1200000 +ellps=bessel +towgs84=674.374,15.056,405.346,0,0,0,0 +units=m +no_defs',
  },
  5070: {
    name: 'NAD83 / Conus Albers',
    proj4: '+proj=aea +lat_0=23 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +x_0=0 +y_0=0 +datum=NAD83 +units=m +no_defs',
  },
  2193: {
    name: 'NZGD2000 / New Zealand Transverse Mercator 2000',
    proj4: `+proj=tmerc +lat_0=0 +lon_0=173 +k=0.9996 +x_0=1600000 +y_0=10000000 ${GRS80_NULL_SHIFT} +units=m +no_defs`,
  },
  3067: {
    name: 'ETRS89 / TM35FIN(E,N)',
    proj4: `+proj=utm +zone=35 ${GRS80_NULL_SHIFT} +units=m +no_defs`,
  },
};

/** Looks an EPSG code up; throws UnsupportedCrsError naming the code when we do not know it. */
export function crsForEpsg(epsg: number): CrsInfo {
  const geographic = GEOGRAPHIC[epsg];
  if (geographic) return { epsg, kind: 'geographic', ...geographic };
  const national = NATIONAL[epsg];
  if (national) return { epsg, kind: 'projected', ...national };
  // Zone families: WGS 84 / UTM north 32601–32660 and south 32701–32760.
  if (epsg >= 32601 && epsg <= 32660) {
    const zone = epsg - 32600;
    return { epsg, kind: 'projected', name: `WGS 84 / UTM zone ${zone}N`, proj4: `+proj=utm +zone=${zone} +datum=WGS84 +units=m +no_defs` };
  }
  if (epsg >= 32701 && epsg <= 32760) {
    const zone = epsg - 32700;
    return { epsg, kind: 'projected', name: `WGS 84 / UTM zone ${zone}S`, proj4: `+proj=utm +zone=${zone} +south +datum=WGS84 +units=m +no_defs` };
  }
  // NAD83 / UTM zones 1N–23N: 26901–26923.
  if (epsg >= 26901 && epsg <= 26923) {
    const zone = epsg - 26900;
    return { epsg, kind: 'projected', name: `NAD83 / UTM zone ${zone}N`, proj4: `+proj=utm +zone=${zone} +datum=NAD83 +units=m +no_defs` };
  }
  // ETRS89 / UTM zones 28N–38N: 25828–25838.
  if (epsg >= 25828 && epsg <= 25838) {
    const zone = epsg - 25800;
    return { epsg, kind: 'projected', name: `ETRS89 / UTM zone ${zone}N`, proj4: `+proj=utm +zone=${zone} ${GRS80_NULL_SHIFT} +units=m +no_defs` };
  }
  // GDA94 / MGA zones 48–58: 28348–28358; GDA2020 / MGA zones 46–59: 7846–7859.
  if (epsg >= 28348 && epsg <= 28358) {
    const zone = epsg - 28300;
    return { epsg, kind: 'projected', name: `GDA94 / MGA zone ${zone}`, proj4: `+proj=utm +zone=${zone} +south ${GRS80_NULL_SHIFT} +units=m +no_defs` };
  }
  if (epsg >= 7846 && epsg <= 7859) {
    const zone = epsg - 7800;
    return { epsg, kind: 'projected', name: `GDA2020 / MGA zone ${zone}`, proj4: `+proj=utm +zone=${zone} +south ${GRS80_NULL_SHIFT} +units=m +no_defs` };
  }
  throw new UnsupportedCrsError(
    `unsupported coordinate reference system EPSG:${epsg}; supported: geographic 4326/4269/4258/4283/7844/4167, WGS 84 UTM 32601–32660/32701–32760, NAD83 UTM 26901–26923, ETRS89 UTM 25828–25838, MGA 28348–28358/7846–7859, and 3857, 27700, 2154, 3035, 28992, 2056, 5070, 2193, 3067`,
  );
}

/** Geographic or projected, for writers; unknown codes are taken as projected. */
export function crsKindForEpsg(epsg: number): CrsKind {
  try {
    return crsForEpsg(epsg).kind;
  } catch {
    return 'projected';
  }
}

/** Every EPSG code we know (zone families expanded), for tests and documentation. */
export function knownEpsgCodes(): number[] {
  const codes = [...Object.keys(GEOGRAPHIC), ...Object.keys(NATIONAL)].map(Number);
  for (let zone = 1; zone <= 60; zone++) codes.push(32600 + zone, 32700 + zone);
  for (let zone = 1; zone <= 23; zone++) codes.push(26900 + zone);
  for (let zone = 28; zone <= 38; zone++) codes.push(25800 + zone);
  for (let zone = 48; zone <= 58; zone++) codes.push(28300 + zone);
  for (let zone = 46; zone <= 59; zone++) codes.push(7800 + zone);
  return codes;
}

/** Converts between WGS 84 lon/lat (degrees) and a CRS's x/y. */
export interface CrsTransform {
  /** lon/lat (WGS 84, degrees) → x/y of the CRS. */
  forward: (lon: number, lat: number) => [number, number];
  /** x/y of the CRS → lon/lat (WGS 84, degrees). */
  inverse: (x: number, y: number) => [number, number];
  /** True when the CRS is WGS 84 (or taken as equal to it), so forward/inverse are the identity. */
  identity: boolean;
}

const WGS84 = '+proj=longlat +datum=WGS84 +no_defs';

/** A transform between WGS 84 and the CRS; geographic CRSs on a null shift (ETRS89, GDA, NAD83) are the identity. */
export function transformForCrs(crs: CrsInfo): CrsTransform {
  if (crs.kind === 'geographic') {
    return { identity: true, forward: (lon, lat) => [lon, lat], inverse: (x, y) => [x, y] };
  }
  const converter = proj4(WGS84, crs.proj4);
  return {
    identity: false,
    forward: (lon, lat) => converter.forward([lon, lat]) as [number, number],
    inverse: (x, y) => converter.inverse([x, y]) as [number, number],
  };
}
