// Battery life estimate for a node. Charge per day =
//   messages·(TX current·time on air + RX-window charge + sensor charge)
//   + sleep current·24 h,
// then life = usable capacity / (charge per day) with self-discharge added.
// Every assumption is returned with the result so the user sees what it rests on.

/**
 * Typical supply current while transmitting, by output power, for an SX1262-class radio
 * with its high-power PA at 3.3 V (datasheet typical values, from memory). Interpolated linearly.
 */
export const TX_CURRENT_TABLE_MA: readonly { powerDbm: number; currentMa: number }[] = [
  { powerDbm: 0, currentMa: 20 },
  { powerDbm: 10, currentMa: 32 },
  { powerDbm: 14, currentMa: 45 },
  { powerDbm: 17, currentMa: 58 },
  { powerDbm: 20, currentMa: 84 },
  { powerDbm: 22, currentMa: 118 },
];

/** Transmit current (mA) at an output power from the table above (clamped to its ends). */
export function txCurrentMa(powerDbm: number): number {
  const t = TX_CURRENT_TABLE_MA;
  if (powerDbm <= t[0].powerDbm) return t[0].currentMa;
  for (let i = 1; i < t.length; i++) {
    if (powerDbm <= t[i].powerDbm) {
      const f = (powerDbm - t[i - 1].powerDbm) / (t[i].powerDbm - t[i - 1].powerDbm);
      return t[i - 1].currentMa + f * (t[i].currentMa - t[i - 1].currentMa);
    }
  }
  return t[t.length - 1].currentMa;
}

export interface BatteryInput {
  capacityMah: number;
  messagesPerDay: number;
  timeOnAirMs: number;
  /** Transmit current; default from TX_CURRENT_TABLE_MA at `txPowerDbm`. */
  txCurrentMa?: number;
  txPowerDbm?: number;
  /** Sleep current of the whole node, µA (default 5 µA). */
  sleepCurrentUa?: number;
  /** Receive-window time after each uplink, ms (default 2 windows × 100 ms). */
  rxWindowMs?: number;
  rxCurrentMa?: number;
  /** Sensor and MCU awake time per message, ms, and current (default 50 ms at 10 mA). */
  sensorActiveMs?: number;
  sensorCurrentMa?: number;
  /** Share of the nominal capacity actually usable (cut-off voltage, cold), default 0.8. */
  usableFraction?: number;
  /** Self-discharge, % of capacity per year (default 1 %/year, lithium primary cell). */
  selfDischargePercentPerYear?: number;
}

export interface BatteryEstimate {
  chargePerDayMah: number;
  averageCurrentUa: number;
  lifeDays: number;
  lifeYears: number;
  breakdownMahPerDay: { transmit: number; receive: number; sensor: number; sleep: number; selfDischarge: number };
  assumptions: string[];
  warnings: string[];
}

/** Beyond this the cell's own ageing, not the load, usually ends its life (common practice for lithium primary cells). */
export const CELL_SERVICE_LIMIT_YEARS = 10;

export class BatteryInputError extends Error {}

function positive(name: string, value: number, allowZero = false): number {
  if (!Number.isFinite(value) || value < 0 || (!allowZero && value === 0)) throw new BatteryInputError(`${name} must be ${allowZero ? '0 or more' : 'positive'} (got ${value})`);
  return value;
}

/** Battery life estimate with its assumptions spelled out. */
export function estimateBattery(input: BatteryInput): BatteryEstimate {
  const capacity = positive('capacityMah', input.capacityMah);
  const messages = positive('messagesPerDay', input.messagesPerDay, true);
  const toaMs = positive('timeOnAirMs', input.timeOnAirMs);
  const txPowerDbm = input.txPowerDbm ?? 14;
  const txMa = positive('txCurrentMa', input.txCurrentMa ?? txCurrentMa(txPowerDbm));
  const sleepUa = positive('sleepCurrentUa', input.sleepCurrentUa ?? 5, true);
  const rxMs = positive('rxWindowMs', input.rxWindowMs ?? 200, true);
  const rxMa = positive('rxCurrentMa', input.rxCurrentMa ?? 5, true);
  const sensorMs = positive('sensorActiveMs', input.sensorActiveMs ?? 50, true);
  const sensorMa = positive('sensorCurrentMa', input.sensorCurrentMa ?? 10, true);
  const usable = input.usableFraction ?? 0.8;
  if (!(usable > 0 && usable <= 1)) throw new BatteryInputError(`usableFraction must be in (0, 1] (got ${usable})`);
  const selfPct = positive('selfDischargePercentPerYear', input.selfDischargePercentPerYear ?? 1, true);

  const msToH = 1 / 3_600_000;
  const transmit = messages * txMa * toaMs * msToH;
  const receive = messages * rxMa * rxMs * msToH;
  const sensor = messages * sensorMa * sensorMs * msToH;
  const awakeHours = (messages * (toaMs + rxMs + sensorMs)) * msToH;
  const sleep = (sleepUa / 1000) * Math.max(0, 24 - awakeHours);
  const selfDischarge = (capacity * selfPct) / 100 / 365.25;
  const chargePerDayMah = transmit + receive + sensor + sleep + selfDischarge;
  const lifeDays = (capacity * usable) / chargePerDayMah;
  const warnings: string[] = [];
  if (lifeDays / 365.25 > CELL_SERVICE_LIMIT_YEARS)
    warnings.push(`estimate exceeds ${CELL_SERVICE_LIMIT_YEARS} years: cell ageing, passivation and seals usually end service first (common practice); plan a replacement by then`);
  if (sleep > transmit + receive + sensor) warnings.push('sleep current dominates: measure the real sleep current of the assembled node, it decides the life');
  return {
    chargePerDayMah,
    averageCurrentUa: ((transmit + receive + sensor + sleep) / 24) * 1000,
    lifeDays,
    lifeYears: lifeDays / 365.25,
    breakdownMahPerDay: { transmit, receive, sensor, sleep, selfDischarge },
    assumptions: [
      input.txCurrentMa === undefined
        ? `transmit current ${txMa.toFixed(1)} mA at ${txPowerDbm} dBm (SX1262-class typical values, from memory)`
        : `transmit current ${txMa} mA (given)`,
      `receive windows ${rxMs} ms per message at ${rxMa} mA`,
      `sensor and MCU awake ${sensorMs} ms per message at ${sensorMa} mA`,
      `sleep current ${sleepUa} µA for the whole node`,
      `${Math.round(usable * 100)} % of the ${capacity} mAh nominal capacity usable (cut-off voltage, cold)`,
      `self-discharge ${selfPct} % of capacity per year`,
      'no retransmissions, no downlinks beyond the receive windows, no join traffic; temperature effects only through the usable share',
    ],
    warnings,
  };
}
