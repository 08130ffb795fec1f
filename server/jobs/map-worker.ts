// The report's map drawn in a one-shot worker thread (renderMapInWorker): the thread opens the
// plan's elevation files and the coverage run's margin raster, composites the map PNG
// (renderMapImage, server/report/map.ts), sends its bytes back and ends.
//
// Why a thread: drawing the map decodes ~25 file tiles per raster into fresh buffers (plus the
// tile windows and the PNG), and its decoded-tile cache keeps them long enough to be promoted to
// V8's old generation, which the rest of a report (the fleet pass, the PDF) never fills enough to
// collect. In the server's own heap those ~20 MB of dead buffers and their native memory stayed
// resident to the end of the report, under the fleet's and the PDF's peaks (5,000-node bench,
// `npm run bench -- report`, step 2b). A thread's heap and buffers are all released when it
// ends, so what the map leaves behind is its PNG (~60 KB).
import { parentPort, Worker, workerData } from 'node:worker_threads';
import { openGeoRaster, type GeoRaster } from '../terrain/raster.ts';
import { renderMapImage, type MapView } from '../report/map.ts';

export interface MapWorkerInput {
  view: MapView;
  /** Elevation files in the plan's order; one that does not open is left out (no relief there). */
  elevationPaths: string[];
  /** The coverage run's margin raster; null: none. */
  marginPath: string | null;
  /** Decoded file tiles each raster keeps while the map is drawn (OpenRasterOptions.decodedTileCache). */
  decodedTileCache: number;
}

export interface MapWorkerOutput {
  png: Uint8Array;
  /** The margin raster opened and is on the map (false: it was unreadable, the map has relief only). */
  marginShown: boolean;
}

/**
 * The thread's young generation (MB): the map allocates few JS objects but many tile buffers, so a
 * small young generation collects the dead buffers' wrappers (and frees their memory) sooner; the
 * thread's peak on the 5,000-node bench map was +21…+58 MB with 4 MB against +24…+80 MB with V8's
 * default (6 runs each, .scratch probe of renderMapInWorker, load 2–4).
 */
const MAP_THREAD_YOUNG_MB = 4;

const ENTRY = new URL('./map-worker.ts', import.meta.url);
const KIND = 'report-map';

/** The map PNG, drawn in a thread of its own that ends once the bytes are back. */
export function renderMapInWorker(input: MapWorkerInput): Promise<MapWorkerOutput> {
  return new Promise((resolve, reject) => {
    const worker = new Worker(new URL('./worker-boot.mjs', import.meta.url), { workerData: { entry: ENTRY.href, kind: KIND, input }, execArgv: [], resourceLimits: { maxYoungGenerationSizeMb: MAP_THREAD_YOUNG_MB } });
    let answer: MapWorkerOutput | null = null;
    let failure: Error | null = null;
    worker.once('message', (message: { png: Uint8Array; marginShown: boolean } | { error: string }) => {
      if ('error' in message) failure = new Error(`report map: ${message.error}`);
      else answer = { png: message.png, marginShown: message.marginShown };
    });
    worker.once('error', (error) => (failure ??= error instanceof Error ? error : new Error(String(error))));
    worker.once('exit', (code) => {
      if (answer) resolve(answer);
      else reject(failure ?? new Error(`report map thread exited with code ${code} before answering`));
    });
  });
}

async function drawMap(input: MapWorkerInput): Promise<MapWorkerOutput> {
  const elevation: GeoRaster[] = [];
  let margin: GeoRaster | null = null;
  try {
    for (const path of input.elevationPaths) {
      try {
        elevation.push(await openGeoRaster(path, { decodedTileCache: input.decodedTileCache }));
      } catch {
        // An unreadable layer leaves the map without relief there; the link engine reports it in the warnings.
      }
    }
    if (input.marginPath) margin = await openGeoRaster(input.marginPath, { decodedTileCache: input.decodedTileCache }).catch(() => null);
    return { png: await renderMapImage(input.view, elevation, margin), marginShown: margin !== null };
  } finally {
    await Promise.all([...elevation.map((r) => r.close()), margin?.close()]);
  }
}

const data = workerData as { entry?: unknown; kind?: unknown; input?: MapWorkerInput } | null;
if (parentPort !== null && data?.entry === ENTRY.href && data.kind === KIND && data.input) {
  const port = parentPort;
  drawMap(data.input).then(
    (out) => port.postMessage(out),
    (error: unknown) => port.postMessage({ error: error instanceof Error ? error.message : String(error) }),
  );
}
