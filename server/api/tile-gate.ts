// Map tiles (hillshade basemap, coverage overlay) are rendered on the main thread and each holds
// a window of decoded terrain while it runs; a browser asks for a screenful (20–30) at once.
// Rendering them one after another costs no throughput (the work is CPU on one thread) but keeps
// the memory of a burst to that of TILE_RENDERS_AT_ONCE renders (npm run bench -- upload).
/** Tile renders one process runs at once; further requests wait their turn (first come, first served). */
export const TILE_RENDERS_AT_ONCE = 2;

export type Gate = <T>(work: () => Promise<T>) => Promise<T>;

/** A gate that lets at most `limit` calls of `work` run at the same time. */
export function createGate(limit: number): Gate {
  let running = 0;
  const waiting: Array<() => void> = [];
  return async <T>(work: () => Promise<T>): Promise<T> => {
    if (running >= limit) await new Promise<void>((resolve) => waiting.push(resolve));
    else running++;
    try {
      return await work();
    } finally {
      const nextInLine = waiting.shift();
      // The slot passes straight to the next caller (running stays the same), or is freed.
      if (nextInLine) nextInLine();
      else running--;
    }
  };
}
