// Option texts and examples for `earshot <command> --help`, for the commands whose option
// schemas carry no `.describe()` text. A command's own `.describe()` and `examples` win; a
// command missing here still gets its option list and an example built from its required
// options (framework.ts, commandHelp).
export interface HelpText {
  options?: Record<string, string>;
  examples?: string[];
}

export const helpTexts: Record<string, HelpText> = {
  'team add': { options: { slug: 'short name used in commands (a-z, 0-9, "-")', name: 'display name' }, examples: ['earshot team add --slug valley-coop --name "Valley Co-op"'] },
  'token revoke': { options: { token: 'the token text', id: 'the token id (from the Team page or the audit log)' }, examples: ['earshot token revoke --id <token id>'] },
  coverage: {
    options: {
      terrain: 'DEM GeoTIFF path',
      site: 'gateway position LAT,LON in decimal degrees',
      'height-m': 'gateway antenna height above ground, m',
      'radius-km': 'radius of the predicted area, km',
      mode: 'los (line of sight), fast (radial diffraction), full (P.1812 paths)',
      out: 'output GeoTIFF path',
      'target-height-m': 'receiver height above ground, m',
      'frequency-mhz': 'carrier frequency, MHz',
      'k-factor': 'effective earth radius factor',
      workers: 'worker threads',
    },
    examples: ['earshot coverage --terrain terrain-samples/demo-valley.tif --site 41.52,-112.07 --height-m 20 --radius-km 5 --mode fast --out /tmp/margin.tif'],
  },
  link: { options: { plan: 'plan id (earshot plans)', node: 'node id (earshot nodes --plan ID)', gateway: 'only this gateway id' }, examples: ['earshot link --plan <plan id> --node <node id>'] },
  recommend: {
    options: { plan: 'plan id (earshot plans)', node: 'node id (earshot nodes --plan ID)', 'target-margin-db': 'margin to meet, dB (default: the plan\'s)', 'target-delivery': 'delivery probability to meet, 0–1', 'max-cost': 'most the kit may cost, in the catalog currency' },
    examples: ['earshot recommend --plan <plan id> --node <node id> --max-cost 150'],
  },
  'predict-path': { options: { input: 'JSON file with the profile and radio parameters, or - for standard input' }, examples: ['earshot predict-path --input profile.json --json'] },
  airtime: {
    options: {
      sf: 'spreading factor 5–12',
      'bw-khz': 'bandwidth, kHz (125, 250, 500 …)',
      'payload-bytes': 'application payload, bytes',
      cr: 'coding rate',
      'preamble-symbols': 'preamble length, symbols (default 8)',
      header: 'explicit or implicit header',
      crc: 'payload CRC on|off',
      ldro: 'low data rate optimisation',
      chip: 'radio family (sets the SF5/SF6 rules)',
    },
    examples: ['earshot airtime --sf 9 --bw-khz 125 --payload-bytes 24'],
  },
  sensitivity: { options: { sf: 'spreading factor', 'bw-khz': 'bandwidth, kHz', 'noise-figure-db': 'receiver noise figure, dB' }, examples: ['earshot sensitivity --sf 10 --bw-khz 125 --noise-figure-db 6'] },
  mismatch: { options: { vswr: 'voltage standing wave ratio (≥ 1)' }, examples: ['earshot mismatch --vswr 1.8'] },
  'build-sheet': {
    options: { design: 'antenna design', 'frequency-mhz': 'design frequency, MHz', radials: 'number of ground radials', 'droop-deg': 'radial droop below horizontal, degrees', 'length-factor': 'velocity/end-effect factor', 'board-permittivity': 'PCB relative permittivity' },
    examples: ['earshot build-sheet --design quarter-wave-ground-plane --frequency-mhz 915'],
  },
  bands: { options: { band: 'only this band plan id' }, examples: ['earshot bands --band us-902-928'] },
  battery: {
    options: {
      'capacity-mah': 'battery capacity, mAh',
      'messages-per-day': 'uplinks per day',
      'time-on-air-ms': 'time on air per message, ms (or give sf, bw-khz, payload-bytes)',
      sf: 'spreading factor',
      'bw-khz': 'bandwidth, kHz',
      cr: 'coding rate',
      'payload-bytes': 'payload, bytes',
      'tx-power-dbm': 'transmit power, dBm',
      'tx-current-ma': 'transmit current, mA',
      'sleep-current-ua': 'sleep current, µA',
      'usable-fraction': 'share of the capacity that is usable, 0–1',
    },
    examples: ['earshot battery --capacity-mah 2600 --messages-per-day 96 --sf 10 --bw-khz 125 --payload-bytes 20'],
  },
  'terrain upload': {
    options: { plan: 'plan id (earshot plans)', file: 'GeoTIFF file (DEM in metres, or clutter classes)', kind: 'layer kind (default elevation)', name: 'layer name shown in the app' },
    examples: ['earshot terrain upload --plan <plan id> --file terrain-samples/elev.tif --name "Valley DEM" --json'],
  },
  profile: {
    options: { terrain: 'DEM GeoTIFF path', from: 'start LAT,LON', to: 'end LAT,LON', 'step-m': 'sample spacing, m', interpolation: 'height interpolation', clutter: 'clutter GeoTIFF path' },
    examples: ['earshot profile --terrain terrain-samples/demo-valley.tif --from 41.50,-112.10 --to 41.55,-112.05'],
  },
};
