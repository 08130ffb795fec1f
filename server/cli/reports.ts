// `earshot report` and `earshot export`: the plan report PDF and the GIS /
// spreadsheet exports, written to a file. The database is reached as the link
// commands do (server/cli/links.ts): DATABASE_URL directly; an embedded data
// folder directly when no process holds it; else through the running server's
// loopback /_admin/report-file route, which runs the same reportFile()
// (server/app/report-files.ts) and returns the bytes base64-encoded.
import { writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { z } from 'zod';
import { loadConfig } from '../config.ts';
import { dataFolderHolder, openDatabase } from '../db/client.ts';
import { LinkEngine } from '../jobs/link-engine.ts';
import { isAppError } from '../app/errors.ts';
import { PlanSettingsError } from '../planning/settings.ts';
import { reportFile, type ReportFile, type ReportFileInput } from '../app/report-files.ts';
import { CliUsageError, defineCommand, stringOption, type CommandDefinition } from './framework.ts';
import { callRunningServer, readRunningServer } from './running-server.ts';

export async function fetchReportFile(input: ReportFileInput, env: NodeJS.ProcessEnv = process.env): Promise<ReportFile> {
  const config = loadConfig(env);
  if (!config.databaseUrl) {
    const holder = dataFolderHolder(config.dataDir);
    if (holder !== null) {
      const server = readRunningServer(config);
      const answer = server ? ((await callRunningServer(server, 'report-file', input, 600_000)) as { fileName: string; contentType: string; base64: string; counts?: Record<string, number> } | null) : null;
      if (answer !== null) return { fileName: answer.fileName, contentType: answer.contentType, bytes: Buffer.from(answer.base64, 'base64'), counts: answer.counts };
      throw new CliUsageError(`the data folder ${config.dataDir} is in use by process ${holder} and no server answers for it; wait and retry, or stop that process`);
    }
  }
  const db = await openDatabase(config);
  const engine = new LinkEngine(db, config);
  try {
    return await reportFile(engine, config, input);
  } catch (error) {
    if (isAppError(error) || error instanceof PlanSettingsError) throw new CliUsageError(error.message);
    throw error;
  } finally {
    await engine.close();
    await db.close();
  }
}

function writeOut(file: ReportFile, out: string) {
  const path = resolve(out);
  try {
    writeFileSync(path, file.bytes);
  } catch (error) {
    throw new CliUsageError(`--out: cannot write ${path}: ${(error as Error).message}`);
  }
  return { out: path, bytes: file.bytes.length, contentType: file.contentType, suggestedName: file.fileName, ...(file.counts ? { counts: file.counts } : {}) };
}

const formatText = (result: unknown) => {
  const r = result as ReturnType<typeof writeOut>;
  return `wrote ${r.out} (${r.bytes} bytes, ${r.contentType})${r.counts ? `; nodes served ${r.counts.served}, marginal ${r.counts.marginal}, unserved ${r.counts.unserved}` : ''}`;
};

export const reportCommands: CommandDefinition[] = [
  defineCommand({
    words: 'report',
    options: z.strictObject({ plan: stringOption(), out: stringOption() }),
    async run(options) {
      return writeOut(await fetchReportFile({ plan: options.plan, kind: 'report', tz: Intl.DateTimeFormat().resolvedOptions().timeZone }), options.out);
    },
    formatText,
  }),
  defineCommand({
    words: 'export',
    options: z.strictObject({
      plan: stringOption(),
      format: z.enum(['geojson', 'kml', 'csv', 'bom'], { error: 'must be geojson, kml, csv or bom' }),
      out: stringOption(),
    }),
    async run(options) {
      return writeOut(await fetchReportFile({ plan: options.plan, kind: options.format }), options.out);
    },
    formatText,
  }),
];
