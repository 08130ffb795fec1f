// A synthetic antenna for the tuning tests: a series R-L-C resonator,
// Z(f) = R + j(2πfL − 1/(2πfC)), resonant at f0 = 1/(2π√(LC)), seen on a Z0 line
// as Γ = (Z − Z0)/(Z + Z0). Written out as a Touchstone one-port file.

export interface SeriesRlc {
  resonanceMhz: number;
  resistanceOhm: number;
  inductanceNh: number;
  z0Ohm?: number;
}

export function reactanceOhm(model: SeriesRlc, frequencyMhz: number): number {
  const w = 2 * Math.PI * frequencyMhz * 1e6;
  const l = model.inductanceNh * 1e-9;
  const w0 = 2 * Math.PI * model.resonanceMhz * 1e6;
  const c = 1 / (w0 * w0 * l);
  return w * l - 1 / (w * c);
}

export function gammaOf(model: SeriesRlc, frequencyMhz: number): { re: number; im: number } {
  const z0 = model.z0Ohm ?? 50;
  const r = model.resistanceOhm;
  const x = reactanceOhm(model, frequencyMhz);
  // (r − z0 + jx)/(r + z0 + jx)
  const d = (r + z0) ** 2 + x * x;
  return { re: ((r - z0) * (r + z0) + x * x) / d, im: (x * (r + z0) - (r - z0) * x) / d };
}

export type Format = 'RI' | 'MA' | 'DB';

/** Touchstone text for the model sampled from `fromMhz` to `toMhz` in `stepMhz`, in the given unit and format. */
export function touchstone(model: SeriesRlc, format: Format, options: { fromMhz: number; toMhz: number; stepMhz: number; unit?: 'Hz' | 'kHz' | 'MHz' | 'GHz' }): string {
  const unit = options.unit ?? 'MHz';
  const scale = { Hz: 1e6, kHz: 1e3, MHz: 1, GHz: 1e-3 }[unit];
  const lines = ['! synthetic series-RLC antenna for earshot tests', `# ${unit} S ${format} R ${model.z0Ohm ?? 50}`];
  const count = Math.round((options.toMhz - options.fromMhz) / options.stepMhz);
  for (let i = 0; i <= count; i++) {
    const f = options.fromMhz + i * options.stepMhz;
    const g = gammaOf(model, f);
    const magnitude = Math.hypot(g.re, g.im);
    const angle = (Math.atan2(g.im, g.re) * 180) / Math.PI;
    const values = format === 'RI' ? [g.re, g.im] : format === 'MA' ? [magnitude, angle] : [20 * Math.log10(magnitude), angle];
    lines.push(`${(f * scale).toPrecision(12)} ${values.map((v) => v.toExponential(9)).join(' ')}`);
  }
  return lines.join('\n') + '\n';
}
