// Client calls for antenna tuning (POST /api/v1/tune, antenna readings of a node).
import { request } from './api.ts';

export interface TuneAdvice {
  code: string;
  message: string;
  buildSheetNotes?: string[];
}

export interface TuneResult {
  bandId: string;
  bandName: string;
  bandFromMhz: number;
  bandToMhz: number;
  bandCentreMhz: number;
  resonanceMhz: number;
  vswrAtResonance: number;
  returnLossDbAtResonance: number | null;
  vswrAtBandCentre: number;
  returnLossDbAtBandCentre: number | null;
  vswr2BandMhz: [number, number] | null;
  channels: Array<{ frequencyMhz: number; vswr: number; returnLossDb: number | null }>;
  design: string | null;
  element: string | null;
  lengthMm: number | null;
  newLengthMm: number | null;
  trimMm: number | null;
  advice: TuneAdvice[];
  lengthRule: string;
  cautions: string[];
  sweep: { source: 'touchstone' | 'csv'; description: string; points: number; fromMhz: number; toMhz: number };
  chart: Array<{ frequencyMhz: number; vswr: number }>;
  reading: { id: string; nodeId: string; measuredAt: string } | null;
}

export interface TuneRequest {
  s1p?: string;
  csv?: string;
  fileName?: string;
  band?: string;
  design?: string;
  lengthMm?: number;
  planId?: string;
  nodeId?: string;
  note?: string;
}

export const postTune = (body: TuneRequest): Promise<TuneResult> => request<TuneResult>('POST', '/tune', body);
