// Client calls for antenna tuning (POST /api/v1/tune, antenna readings of a node).
import { request, type Answer } from './api.ts';

/** The tuning answer; its shape comes from the OpenAPI document. */
export type TuneResult = Answer<'/api/v1/tune', 'post'>;
export type TuneAdvice = TuneResult['advice'][number];

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
