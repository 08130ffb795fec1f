// Where a link run's tiles go, as an interface of its own: the coverage job and the siting split
// hand children to it without importing the runner that implements it (server/jobs/link-runs.ts).
/** Where tiles go: this process, or the BullMQ queue that `npm run worker` processes take them from. */
export interface LinkRunJobs {
  readonly kind: 'in-process' | 'bullmq';
  enqueue(runId: string, indices: readonly number[]): Promise<void>;
  /** Takes queued tiles of a cancelled run off the queue (running ones stop at their next batch). */
  withdraw(runId: string, indices: readonly number[]): Promise<void>;
  /** Resolves when nothing is queued in this process (tests; a no-op for the queue). */
  idle(): Promise<void>;
  close(): Promise<void>;
}
