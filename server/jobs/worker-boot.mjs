// Entry of every worker thread: imports the real worker module named in
// workerData.entry. Plain JavaScript so that it loads with or without a loader
// in the parent (tsx, vitest, or the compiled build/). A TypeScript entry needs
// the tsx loader registered inside the thread first; a compiled .js entry does not.
import { workerData } from 'node:worker_threads';

if (String(workerData.entry).endsWith('.ts')) {
  const { register } = await import('tsx/esm/api');
  register();
}
await import(workerData.entry);
