// The terrain store: a plan's elevation layers (finest resolution first) and an
// optional clutter layer, sampled through one bounded LRU cache of decoded blocks.
// Sampling is two-phase so hot loops stay synchronous: a pass samples every point
// whose blocks are cached and notes the missing blocks; the store loads those (a
// batch that fits the cache), and the pass repeats for the points still waiting.
import { CLUTTER_CLASSES, CLUTTER_CODE_PRESETS, NO_CLUTTER_CLASS, clutterHeightsByIndex, clutterLookup, type ClutterClass, type ClutterCodeMap, type ClutterPreset } from './clutter.ts';
import { openGeoRaster, type GeoRaster, type LonLatBounds } from './raster.ts';

export type Interpolation = 'nearest' | 'bilinear';

export interface TerrainStoreOptions {
  /** Memory ceiling of the decoded-block cache in bytes (raised to hold at least 8 blocks of the largest layer). */
  cacheBytes?: number;
  /** Per-plan overrides of the representative clutter heights (m). */
  clutterHeightsM?: Partial<Record<ClutterClass, number>>;
}

export interface AddLayerOptions {
  kind: 'elevation' | 'clutter';
  name?: string;
  /** Clutter only: raster code → class, or a preset name (default 'earshot'). */
  clutterCodes?: ClutterCodeMap | ClutterPreset;
}

export interface TerrainLayerInfo {
  index: number;
  kind: 'elevation' | 'clutter';
  name: string;
  /** Finer of the x/y pixel sizes in metres. */
  resolutionM: number;
  boundsLonLat: LonLatBounds;
  raster: GeoRaster;
}

interface Block {
  data: Float32Array;
  widthPx: number;
  lastUsed: number;
  bytes: number;
}

interface StoreLayer extends TerrainLayerInfo {
  blocks: (Block | null)[];
  /** Block indices a sampling pass found missing. */
  missing: Set<number>;
  inflight: Map<number, Promise<void>>;
  /** Clutter only: code → class index. */
  lookup: Uint8Array | null;
}

export interface CacheStats {
  capacityBytes: number;
  usedBytes: number;
  blocks: number;
  loads: number;
  evictions: number;
}

const DEFAULT_CACHE_BYTES = 256 * 1024 * 1024;

/** How run() samples a layer (a constant, not a closure per call). */
const NEAREST = 0;
const BILINEAR = 1;
type SampleMode = typeof NEAREST | typeof BILINEAR;

export class TerrainStore {
  private readonly layers: StoreLayer[] = [];
  private requestedCacheBytes: number;
  private capacityBytes: number;
  private usedBytes = 0;
  private clock = 0;
  private loads = 0;
  private evictions = 0;
  private readonly clutterHeights: Float64Array;

  constructor(options: TerrainStoreOptions = {}) {
    const cacheBytes = options.cacheBytes ?? DEFAULT_CACHE_BYTES;
    if (!Number.isFinite(cacheBytes) || cacheBytes <= 0) throw new RangeError('TerrainStore: cacheBytes must be a positive number of bytes');
    this.requestedCacheBytes = cacheBytes;
    this.capacityBytes = cacheBytes;
    this.clutterHeights = clutterHeightsByIndex(options.clutterHeightsM);
  }

  /** Adds an opened raster; elevation layers are kept finest resolution first. */
  addLayer(raster: GeoRaster, options: AddLayerOptions): TerrainLayerInfo {
    if (options.kind === 'clutter' && this.layers.some((layer) => layer.kind === 'clutter')) {
      throw new Error('TerrainStore: only one clutter layer per store');
    }
    const { blocksAcross, blocksDown, blockWidthPx, blockHeightPx } = raster.blockLayout;
    let lookup: Uint8Array | null = null;
    if (options.kind === 'clutter') {
      const codes = options.clutterCodes ?? 'earshot';
      lookup = clutterLookup(typeof codes === 'string' ? CLUTTER_CODE_PRESETS[codes] : codes);
    }
    const layer: StoreLayer = {
      index: this.layers.length,
      kind: options.kind,
      name: options.name ?? `layer ${this.layers.length + 1}`,
      resolutionM: Math.min(raster.resolutionM.x, raster.resolutionM.y),
      boundsLonLat: raster.boundsLonLat,
      raster,
      blocks: new Array<Block | null>(blocksAcross * blocksDown).fill(null),
      missing: new Set(),
      inflight: new Map(),
      lookup,
    };
    this.layers.push(layer);
    this.layers.sort((a, b) => (a.kind === b.kind ? a.resolutionM - b.resolutionM : a.kind === 'elevation' ? -1 : 1));
    this.layers.forEach((l, i) => (l.index = i));
    this.capacityBytes = Math.max(this.requestedCacheBytes, 8 * blockWidthPx * blockHeightPx * 4, ...this.layers.map((l) => 8 * l.raster.blockLayout.blockWidthPx * l.raster.blockLayout.blockHeightPx * 4));
    return layer;
  }

  /** Elevation layers, finest first. */
  get elevationLayers(): TerrainLayerInfo[] {
    return this.layers.filter((layer) => layer.kind === 'elevation');
  }

  get clutterLayer(): TerrainLayerInfo | null {
    return this.layers.find((layer) => layer.kind === 'clutter') ?? null;
  }

  /** Representative clutter height (m) of a class index (NaN for NO_CLUTTER_CLASS). */
  clutterHeightM(classIndex: number): number {
    return classIndex < this.clutterHeights.length ? this.clutterHeights[classIndex] : Number.NaN;
  }

  /** Finest elevation resolution (m) among layers that intersect the box (all layers when none is given); NaN with no layers. */
  finestResolutionM(box?: LonLatBounds): number {
    let best = Number.NaN;
    for (const layer of this.layers) {
      if (layer.kind !== 'elevation') continue;
      const b = layer.boundsLonLat;
      if (box && (b.east < box.west || b.west > box.east || b.north < box.south || b.south > box.north)) continue;
      if (!(layer.resolutionM >= best)) best = layer.resolutionM;
    }
    return best;
  }

  cacheStats(): CacheStats {
    return { capacityBytes: this.capacityBytes, usedBytes: this.usedBytes, blocks: this.layers.reduce((n, l) => n + l.blocks.filter(Boolean).length, 0), loads: this.loads, evictions: this.evictions };
  }

  /** Ground height (m) at a WGS 84 position; null where no layer has data (NoData never becomes 0). */
  async sampleElevation(lat: number, lon: number, interpolation: Interpolation = 'bilinear'): Promise<number | null> {
    const out = await this.sampleElevations(Float64Array.of(lat), Float64Array.of(lon), interpolation);
    return Number.isNaN(out[0]) ? null : out[0];
  }

  /** Clutter class and representative height at a WGS 84 position; null without a clutter layer or class there. */
  async sampleClutter(lat: number, lon: number): Promise<{ clutterClass: ClutterClass; heightM: number } | null> {
    const result = await this.sampleClutters(Float64Array.of(lat), Float64Array.of(lon));
    if (!result || result.classIndex[0] === NO_CLUTTER_CLASS) return null;
    return { clutterClass: CLUTTER_CLASSES[result.classIndex[0]], heightM: result.heightM[0] };
  }

  /**
   * Ground heights (m, NaN = no data) at many positions. Finer layers win; where a finer layer has NoData
   * or does not cover a point, the next coarser layer is tried. `pixelsFor` may supply each layer's
   * continuous pixel coordinates (profiles interpolate them between exact transforms).
   */
  async sampleElevations(
    lat: Float64Array,
    lon: Float64Array,
    interpolation: Interpolation = 'bilinear',
    pixelsFor?: (raster: GeoRaster, indices: Int32Array, px: Float64Array, py: Float64Array) => void,
  ): Promise<Float64Array> {
    const n = lat.length;
    const out = new Float64Array(n).fill(Number.NaN);
    let pending = new Int32Array(n);
    for (let i = 0; i < n; i++) pending[i] = i;
    for (const layer of this.layers) {
      if (layer.kind !== 'elevation' || pending.length === 0) continue;
      const { px, py } = this.pixelsOf(layer, lat, lon, pending, pixelsFor);
      await this.run(layer, pending, px, py, interpolation === 'bilinear' ? BILINEAR : NEAREST, out);
      // The points this layer left without data, for the next (coarser) layer; a plain loop (typed-array
      // filter with a callback costs more than the sampling of a whole profile).
      let left = 0;
      for (let k = 0; k < pending.length; k++) if (Number.isNaN(out[pending[k]])) pending[left++] = pending[k];
      pending = pending.subarray(0, left);
    }
    return out;
  }

  /** Clutter class indices (NO_CLUTTER_CLASS where none) and heights (m, NaN where none) at many positions; null without a clutter layer. */
  async sampleClutters(lat: Float64Array, lon: Float64Array, pixelsFor?: (raster: GeoRaster, indices: Int32Array, px: Float64Array, py: Float64Array) => void): Promise<{ classIndex: Uint8Array; heightM: Float64Array } | null> {
    const layer = this.layers.find((l) => l.kind === 'clutter');
    if (!layer || !layer.lookup) return null;
    const n = lat.length;
    const codes = new Float64Array(n).fill(Number.NaN);
    const all = new Int32Array(n);
    for (let i = 0; i < n; i++) all[i] = i;
    const { px, py } = this.pixelsOf(layer, lat, lon, all, pixelsFor);
    await this.run(layer, all, px, py, NEAREST, codes);
    const classIndex = new Uint8Array(n).fill(NO_CLUTTER_CLASS);
    const heightM = new Float64Array(n).fill(Number.NaN);
    const lookup = layer.lookup;
    for (let i = 0; i < n; i++) {
      const code = codes[i];
      if (Number.isNaN(code) || code < 0 || code > 65535) continue;
      const cls = lookup[Math.round(code)];
      classIndex[i] = cls;
      if (cls !== NO_CLUTTER_CLASS) heightM[i] = this.clutterHeights[cls];
    }
    return { classIndex, heightM };
  }

  /** Drops every cached block. */
  clearCache(): void {
    for (const layer of this.layers) layer.blocks.fill(null);
    this.usedBytes = 0;
  }

  async close(): Promise<void> {
    this.clearCache();
    await Promise.all(this.layers.map((layer) => layer.raster.close()));
    this.layers.length = 0;
  }

  private pixelsOf(layer: StoreLayer, lat: Float64Array, lon: Float64Array, indices: Int32Array, pixelsFor?: (raster: GeoRaster, indices: Int32Array, px: Float64Array, py: Float64Array) => void): { px: Float64Array; py: Float64Array } {
    const m = indices.length;
    const px = new Float64Array(m);
    const py = new Float64Array(m);
    if (pixelsFor) {
      pixelsFor(layer.raster, indices, px, py);
      return { px, py };
    }
    const gt = layer.raster.geoTransform;
    const transform = layer.raster.transform;
    for (let k = 0; k < m; k++) {
      const i = indices[k];
      let x = lon[i];
      let y = lat[i];
      if (!transform.identity) [x, y] = transform.forward(x, y);
      px[k] = (x - gt[0]) / gt[1];
      py[k] = (y - gt[3]) / gt[5];
    }
    return { px, py };
  }

  /**
   * Samples points of one layer, loading missing blocks in cache-sized batches until every point is resolved.
   * The first pass runs over every point with no index list; later passes only over the points that waited.
   */
  private async run(layer: StoreLayer, indices: Int32Array, px: Float64Array, py: Float64Array, mode: SampleMode, out: Float64Array): Promise<void> {
    let todo: Int32Array | null = null;
    let count = indices.length;
    for (let guard = 0; count > 0; guard++) {
      layer.missing.clear();
      this.clock++;
      let waiting = 0;
      let retry: Int32Array | null = null;
      for (let t = 0; t < count; t++) {
        const k = todo === null ? t : todo[t];
        this.missedFlag = false;
        const value = mode === BILINEAR ? this.bilinearAt(layer, px[k], py[k]) : this.nearestAt(layer, px[k], py[k]);
        if (this.missedFlag) {
          retry ??= new Int32Array(count - t);
          retry[waiting++] = k;
        } else out[indices[k]] = value;
      }
      if (waiting === 0) return;
      if (guard > 100000) throw new Error('TerrainStore: sampling made no progress (cache too small?)');
      await this.loadMissing(layer);
      todo = retry;
      count = waiting;
    }
  }

  private missedFlag = false;

  /** Loads missing blocks of a layer, at most half the cache per batch (the rest stays for blocks just used). */
  private async loadMissing(layer: StoreLayer): Promise<void> {
    const layout = layer.raster.blockLayout;
    const blockBytes = layout.blockWidthPx * layout.blockHeightPx * 4;
    const maxBlocks = Math.max(4, Math.floor(this.capacityBytes / 2 / blockBytes));
    const wanted = [...layer.missing].slice(0, maxBlocks);
    layer.missing.clear();
    const concurrency = 4;
    for (let i = 0; i < wanted.length; i += concurrency) {
      await Promise.all(wanted.slice(i, i + concurrency).map((blockIndex) => this.loadBlock(layer, blockIndex)));
    }
  }

  private loadBlock(layer: StoreLayer, blockIndex: number): Promise<void> {
    if (layer.blocks[blockIndex]) return Promise.resolve();
    const existing = layer.inflight.get(blockIndex);
    if (existing) return existing;
    const { blocksAcross } = layer.raster.blockLayout;
    const promise = (async () => {
      const bx = blockIndex % blocksAcross;
      const by = Math.floor(blockIndex / blocksAcross);
      const block = await layer.raster.readBlock(bx, by);
      const bytes = block.data.byteLength;
      this.makeRoom(bytes);
      layer.blocks[blockIndex] = { data: block.data, widthPx: block.widthPx, lastUsed: ++this.clock, bytes };
      this.usedBytes += bytes;
      this.loads++;
    })().finally(() => layer.inflight.delete(blockIndex));
    layer.inflight.set(blockIndex, promise);
    return promise;
  }

  /** Evicts least recently used blocks until `bytes` more fit (down to 90 % of the ceiling, so evictions come in batches). */
  private makeRoom(bytes: number): void {
    if (this.usedBytes + bytes <= this.capacityBytes) return;
    const entries: { layer: StoreLayer; index: number; block: Block }[] = [];
    for (const layer of this.layers) {
      layer.blocks.forEach((block, index) => {
        if (block) entries.push({ layer, index, block });
      });
    }
    entries.sort((a, b) => a.block.lastUsed - b.block.lastUsed);
    const target = this.capacityBytes * 0.9 - bytes;
    for (const entry of entries) {
      if (this.usedBytes <= target) break;
      entry.layer.blocks[entry.index] = null;
      this.usedBytes -= entry.block.bytes;
      this.evictions++;
    }
  }

  /** Value of pixel (col, row): NaN for NoData; NaN and a missing-block note when its block is not cached. */
  private pixel(layer: StoreLayer, col: number, row: number): number {
    const layout = layer.raster.blockLayout;
    const bx = (col / layout.blockWidthPx) | 0;
    const by = (row / layout.blockHeightPx) | 0;
    const blockIndex = by * layout.blocksAcross + bx;
    const block = layer.blocks[blockIndex];
    if (block === null) {
      layer.missing.add(blockIndex);
      this.missedFlag = true;
      return Number.NaN;
    }
    block.lastUsed = this.clock;
    return block.data[(row - by * layout.blockHeightPx) * block.widthPx + (col - bx * layout.blockWidthPx)];
  }

  /** Nearest sample: the pixel containing the point (GDAL convention: pixel (i, j) spans [i, i+1) × [j, j+1)). */
  private nearestAt(layer: StoreLayer, x: number, y: number): number {
    const { widthPx, heightPx } = layer.raster;
    if (!(x >= 0 && y >= 0 && x < widthPx && y < heightPx)) return Number.NaN;
    return this.pixel(layer, Math.floor(x), Math.floor(y));
  }

  /**
   * Bilinear sample under the pixel-centre convention: centres at (i + 0.5, j + 0.5); the four centres around
   * the point weighted by (1 − fx)(1 − fy), fx(1 − fy), (1 − fx)fy, fx·fy. Within half a pixel of the edge the
   * outer row/column is repeated. Any NoData neighbour with a non-zero weight makes the result NoData.
   */
  private bilinearAt(layer: StoreLayer, x: number, y: number): number {
    const { widthPx, heightPx } = layer.raster;
    if (!(x >= 0 && y >= 0 && x < widthPx && y < heightPx)) return Number.NaN;
    const u = x - 0.5;
    const v = y - 0.5;
    let i0 = Math.floor(u);
    let j0 = Math.floor(v);
    let fx = u - i0;
    let fy = v - j0;
    if (i0 < 0) {
      i0 = 0;
      fx = 0;
    } else if (i0 >= widthPx - 1) {
      i0 = widthPx - 1;
      fx = 0;
    }
    if (j0 < 0) {
      j0 = 0;
      fy = 0;
    } else if (j0 >= heightPx - 1) {
      j0 = heightPx - 1;
      fy = 0;
    }
    const i1 = fx > 0 ? i0 + 1 : i0;
    const j1 = fy > 0 ? j0 + 1 : j0;
    const z00 = this.pixel(layer, i0, j0);
    const z10 = i1 === i0 ? z00 : this.pixel(layer, i1, j0);
    const z01 = j1 === j0 ? z00 : this.pixel(layer, i0, j1);
    const z11 = i1 === i0 ? z01 : j1 === j0 ? z10 : this.pixel(layer, i1, j1);
    return (1 - fx) * (1 - fy) * z00 + fx * (1 - fy) * z10 + (1 - fx) * fy * z01 + fx * fy * z11;
  }
}

/** One terrain file for openTerrainStore. */
export interface TerrainFile {
  path: string;
  kind?: 'elevation' | 'clutter';
  name?: string;
  clutterCodes?: ClutterCodeMap | ClutterPreset;
}

/** Opens files into a new store (closing what was opened if one fails). */
export async function openTerrainStore(files: TerrainFile[], options: TerrainStoreOptions = {}): Promise<TerrainStore> {
  const store = new TerrainStore(options);
  try {
    for (const file of files) {
      const raster = await openGeoRaster(file.path);
      store.addLayer(raster, { kind: file.kind ?? 'elevation', name: file.name ?? file.path, clutterCodes: file.clutterCodes });
    }
  } catch (error) {
    await store.close();
    throw error;
  }
  return store;
}
