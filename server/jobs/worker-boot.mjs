// Entry of every worker thread: registers the TypeScript loader (tsx) inside
// the thread, then imports the real worker module named in workerData.entry.
// Plain JavaScript so that it loads with or without a loader in the parent
// (tsx, vitest, or a bundled build).
import { workerData } from 'node:worker_threads';

const { register } = await import('tsx/esm/api');
register();
await import(workerData.entry);
