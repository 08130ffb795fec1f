// A pool of worker threads for CPU-heavy coverage work in the server (or CLI)
// process. Workers stay alive between runs; each task is a slice of one area
// prediction (a sector of rays, or a band of rows) over shared memory, so the
// terrain and result buffers are never copied.
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';

/** Spare shared buffers a pool keeps between runs (a run takes up to three: window, clutter, ray samples). */
const MAX_SPARE_BUFFERS = 3;

interface Pending<Task, Result> {
  task: Task;
  resolve: (result: Result) => void;
  reject: (error: Error) => void;
}

interface Slot<Task, Result> {
  worker: Worker;
  busy: Pending<Task, Result> | null;
}

/** Number of worker threads used when none is configured: every core. */
export function defaultWorkerCount(): number {
  return Math.max(1, availableParallelism());
}

/**
 * `entry` is the worker module; it answers `{ id, error? }` per task (coverage:
 * `createAreaPool` in area-runner.ts; the link table: link-pool.ts).
 */
export class WorkerPool<Task, Result extends { error?: string }> {
  readonly size: number;
  private slots: Slot<Task, Result>[] = [];
  private queue: Pending<Task, Result>[] = [];
  private closed = false;
  /** Shared buffers of finished runs, reused by the next run of the same size (see takeShared). */
  private spare: SharedArrayBuffer[] = [];

  constructor(
    size: number,
    private readonly entry: URL,
  ) {
    if (!Number.isInteger(size) || size < 1) throw new RangeError('worker pool size must be a whole number ≥ 1');
    this.size = size;
    for (let i = 0; i < size; i++) this.slots.push(this.spawn());
  }

  private spawn(): Slot<Task, Result> {
    const worker = new Worker(new URL('./worker-boot.mjs', import.meta.url), {
      workerData: { entry: this.entry.href },
      execArgv: [],
    });
    const slot: Slot<Task, Result> = { worker, busy: null };
    worker.on('message', (result: Result) => {
      const pending = slot.busy;
      slot.busy = null;
      if (pending) {
        if (result.error) pending.reject(new Error(result.error));
        else pending.resolve(result);
      }
      this.pump();
    });
    worker.on('error', (error) => {
      const pending = slot.busy;
      slot.busy = null;
      pending?.reject(error instanceof Error ? error : new Error(String(error)));
    });
    worker.on('exit', () => {
      const index = this.slots.indexOf(slot);
      if (index < 0 || this.closed) return;
      // A dead worker is replaced so the pool keeps its size.
      const pending = slot.busy;
      slot.busy = null;
      pending?.reject(new Error('coverage worker thread exited'));
      this.slots[index] = this.spawn();
      this.pump();
    });
    worker.unref();
    return slot;
  }

  /**
   * A zero-filled shared buffer of exactly `bytes`, reused from an earlier run when one of that size is
   * spare: fresh memory costs its first-touch page faults (measured ≈ 3 ms per MB on the 2-core machine,
   * 40 ms for a 12 MB ray-sample buffer), paid again on every run otherwise.
   */
  takeShared(bytes: number): SharedArrayBuffer {
    const index = this.spare.findIndex((buffer) => buffer.byteLength === bytes);
    if (index < 0) return new SharedArrayBuffer(bytes);
    const [buffer] = this.spare.splice(index, 1);
    new Uint8Array(buffer).fill(0);
    return buffer;
  }

  /** Gives a buffer from takeShared back once no task uses it any more; keeps the last few. */
  giveBackShared(buffer: SharedArrayBuffer): void {
    if (this.closed) return;
    this.spare.push(buffer);
    if (this.spare.length > MAX_SPARE_BUFFERS) this.spare.shift();
  }

  /** Runs one task on the next free worker. */
  exec(task: Task): Promise<Result> {
    if (this.closed) return Promise.reject(new Error('worker pool is closed'));
    return new Promise((resolve, reject) => {
      this.queue.push({ task, resolve, reject });
      this.pump();
    });
  }

  private pump(): void {
    for (const slot of this.slots) {
      if (this.queue.length === 0) return;
      if (slot.busy) continue;
      const next = this.queue.shift()!;
      slot.busy = next;
      slot.worker.ref();
      slot.worker.postMessage(next.task);
    }
    for (const slot of this.slots) if (!slot.busy) slot.worker.unref();
  }

  async close(): Promise<void> {
    this.closed = true;
    this.spare = [];
    for (const pending of this.queue) pending.reject(new Error('worker pool is closed'));
    this.queue = [];
    await Promise.all(this.slots.map((slot) => slot.worker.terminate()));
    this.slots = [];
  }
}
