// The served / marginal / unserved words come from the server (GET /api/v1/status-words,
// defined once in server/planning/status.ts) and replace the built-in legend labels.
import { request } from './api.ts';
import { statusStyle } from './symbols.ts';

type Words = Record<'served' | 'marginal' | 'unserved', { label: string; meaning: string }>;

export async function adoptStatusWords(): Promise<void> {
  try {
    const words = await request<Words>('GET', '/status-words');
    for (const key of ['served', 'marginal', 'unserved'] as const) {
      if (words[key]) statusStyle[key].label = `${words[key].label} (${words[key].meaning})`;
    }
  } catch {
    // Signed out (401) or an older server: keep the built-in labels until the next start.
  }
}
