// One function behind `earshot report` / `earshot export` and their loopback
// admin route: the report PDF or an export of a plan found by id alone (an
// operator on the machine; the API scopes by team), as bytes with a file name.
import { z } from 'zod';
import type { Config } from '../config.ts';
import { findPlanById } from '../db/repositories/links.ts';
import { LinkInputError, type LinkEngine } from '../jobs/link-engine.ts';
import { planExport, type ExportFormat } from './exports.ts';
import { planReport } from './report.ts';

export const reportFileInput = z.strictObject({
  plan: z.string().min(1),
  kind: z.enum(['report', 'geojson', 'kml', 'csv', 'bom'], { error: 'must be report, geojson, kml, csv or bom' }),
  /** Time zone of the report's printed times (the CLI sends the machine's). */
  tz: z.string().max(64).optional(),
});
export type ReportFileInput = z.infer<typeof reportFileInput>;

export interface ReportFile {
  fileName: string;
  contentType: string;
  bytes: Buffer;
  /** Counts of the plan's fleet, so a script can check what it got. */
  counts?: Record<string, number>;
}

export async function reportFile(engine: LinkEngine, config: Config, input: ReportFileInput): Promise<ReportFile> {
  const plan = await findPlanById(engine.database, input.plan);
  if (!plan) throw new LinkInputError('not_found', 'not_found', `--plan: no plan "${input.plan}"`);
  if (input.kind === 'report') {
    const report = await planReport(engine, config, plan, { timeZone: input.tz ?? null });
    return { fileName: report.fileName, contentType: 'application/pdf', bytes: report.pdf, counts: report.figures.counts };
  }
  const file = await planExport(engine, plan, input.kind as ExportFormat);
  return { fileName: file.fileName, contentType: file.contentType, bytes: Buffer.from([...file.chunks].join(''), 'utf8') };
}
