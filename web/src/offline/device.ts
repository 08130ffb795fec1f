// What this device keeps for visits with no signal (IndexedDB "earshot-offline"):
// - kept: the nodes an installer chose to keep; while one is kept, the service worker
//   (web/public/sw.js) records the plan's API answers and map tiles on their way through
//   and answers from them when the network is gone;
// - responses: those recorded answers (JSON and PNG tiles), with their size;
// - outbox: readings and install-status changes made offline, "not yet sent" until the
//   connection returns; the server's version check decides conflicts (a 409 is kept and
//   shown, never overwritten silently).
// Signing out empties all of it.
import { ApiError, getClientSettings, getMe, getNodeReadings, getVisitSheet, hillshadeTileUrl, listCoverage, coverageTileUrl, postReading, request, storedToken, type FleetNode, type ReadingInput } from '../api.ts';
import { PlanStore } from '../plan-store.ts';
import { adoptStatusWords } from '../status-words.ts';

const DB_NAME = 'earshot-offline';
const DB_VERSION = 1;
/** Zoom levels of map tiles kept around each node, and how many tiles out from the node's tile (bounded storage). */
export const KEPT_ZOOMS = [13, 14, 15] as const;
export const KEPT_TILE_RADIUS = 1;
export const outboxEvent = 'earshot:outbox';

export interface KeptNode {
  key: string;
  planId: string;
  nodeId: string;
  nodeName: string;
  keptAt: string;
  tiles: number;
}

export interface OutboxEntry {
  id?: number;
  kind: 'reading' | 'install-status';
  planId: string;
  nodeId: string;
  nodeName: string;
  /** What it is, in words ("reading RSSI −112.0 dBm, SNR −7.5 dB at SF10"). */
  label: string;
  reading?: ReadingInput;
  installStatus?: string;
  /** The node version the change was made on (the server's check decides). */
  version?: number;
  createdAt: string;
  state: 'pending' | 'conflict' | 'failed';
  problem?: string;
  serverInstallStatus?: string;
  serverVersion?: number;
}

function openDb(): Promise<IDBDatabase> {
  return new Promise((resolve, reject) => {
    const req = indexedDB.open(DB_NAME, DB_VERSION);
    // Same schema as web/public/sw.js.
    req.onupgradeneeded = () => {
      const db = req.result;
      if (!db.objectStoreNames.contains('responses')) db.createObjectStore('responses', { keyPath: 'url' }).createIndex('planId', 'planId');
      if (!db.objectStoreNames.contains('kept')) db.createObjectStore('kept', { keyPath: 'key' }).createIndex('planId', 'planId');
      if (!db.objectStoreNames.contains('outbox')) db.createObjectStore('outbox', { keyPath: 'id', autoIncrement: true });
    };
    req.onsuccess = () => resolve(req.result);
    req.onerror = () => reject(req.error ?? new Error('IndexedDB could not be opened'));
  });
}

async function idb<T>(storeName: string, mode: IDBTransactionMode, run: (store: IDBObjectStore) => IDBRequest<T> | void): Promise<T> {
  const db = await openDb();
  return new Promise<T>((resolve, reject) => {
    const tx = db.transaction(storeName, mode);
    const req = run(tx.objectStore(storeName));
    tx.oncomplete = () => {
      db.close();
      resolve(req ? req.result : (undefined as T));
    };
    tx.onerror = () => {
      db.close();
      reject(tx.error ?? new Error('IndexedDB write failed'));
    };
  });
}

const keyOf = (planId: string, nodeId: string) => `${planId}/${nodeId}`;

export const offlineSupported = (): boolean => 'serviceWorker' in navigator && 'indexedDB' in window;

/** Registers the service worker and sends the outbox whenever the connection returns. */
export function startOffline(): void {
  if (!offlineSupported()) return;
  void navigator.serviceWorker.register('/sw.js').catch(() => undefined);
  window.addEventListener('online', () => void flushOutbox());
  if (navigator.onLine) void flushOutbox();
}

async function controlled(timeoutMs = 15_000): Promise<void> {
  if (navigator.serviceWorker.controller) return;
  await navigator.serviceWorker.ready;
  if (navigator.serviceWorker.controller) return;
  await new Promise<void>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error('the offline helper (service worker) did not start')), timeoutMs);
    navigator.serviceWorker.addEventListener('controllerchange', () => {
      clearTimeout(timer);
      resolve();
    }, { once: true });
  });
}

export const keptNodes = (): Promise<KeptNode[]> => idb<KeptNode[]>('kept', 'readonly', (s) => s.getAll() as IDBRequest<KeptNode[]>);
export async function isKept(planId: string, nodeId: string): Promise<boolean> {
  return (await idb<KeptNode | undefined>('kept', 'readonly', (s) => s.get(keyOf(planId, nodeId)) as IDBRequest<KeptNode | undefined>)) !== undefined;
}

/** Web-Mercator tile of a point (the slippy-map tile scheme the tile routes use). */
export function tileOf(lat: number, lon: number, z: number): { x: number; y: number } {
  const n = 2 ** z;
  const rad = (lat * Math.PI) / 180;
  return { x: Math.floor(((lon + 180) / 360) * n), y: Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n) };
}

/** Headers the API wants from a page request (CSRF proof and, with a pasted token, the bearer). */
function apiHeaders(): Record<string, string> {
  const out: Record<string, string> = { 'x-earshot-request': '1' };
  const token = storedToken();
  if (token) out.authorization = `Bearer ${token}`;
  return out;
}

/** A map tile as a blob (through the service worker: from the device when offline). Empty tiles give null. */
export async function tileBlob(url: string): Promise<Blob | null> {
  const response = await fetch(url, { credentials: 'same-origin', headers: apiHeaders() });
  if (response.status !== 200) return null;
  return response.blob();
}

/**
 * Keeps a node for a visit with no signal: reads, through the service worker (which records
 * them), everything the installer view shows for it, then the map tiles around it.
 */
export async function keepNode(planId: string, node: FleetNode, progress: (text: string) => void): Promise<KeptNode> {
  if (!offlineSupported()) throw new Error('this browser cannot keep pages for offline use');
  await controlled();
  const entry: KeptNode = { key: keyOf(planId, node.id), planId, nodeId: node.id, nodeName: node.name, keptAt: new Date().toISOString(), tiles: 0 };
  await idb('kept', 'readwrite', (s) => s.put(entry));
  progress('Keeping the node panel, kit and visit sheet…');
  // The answers the app reads on start (read again here, so the service worker records them now that something is kept).
  await getMe();
  await getClientSettings(); // field ranges every form reads before it is drawn
  await adoptStatusWords();
  await new PlanStore(planId).load();
  await getVisitSheet(planId, node.id);
  await getNodeReadings(planId, node.id).catch(() => undefined);
  const templates = [hillshadeTileUrl(planId)];
  const runs = await listCoverage(planId).catch(() => []);
  const done = runs.filter((r) => r.status === 'done').sort((a, b) => b.createdAt.localeCompare(a.createdAt));
  if (done[0]) templates.push(coverageTileUrl(planId, done[0].id));
  const urls: string[] = [];
  for (const template of templates) {
    for (const z of KEPT_ZOOMS) {
      const c = tileOf(node.lat, node.lon, z);
      for (let dx = -KEPT_TILE_RADIUS; dx <= KEPT_TILE_RADIUS; dx++)
        for (let dy = -KEPT_TILE_RADIUS; dy <= KEPT_TILE_RADIUS; dy++)
          urls.push(template.replace('{z}', String(z)).replace('{x}', String(c.x + dx)).replace('{y}', String(c.y + dy)));
    }
  }
  let got = 0;
  for (let i = 0; i < urls.length; i++) {
    progress(`Keeping map tiles ${i + 1} of ${urls.length}…`);
    if (await tileBlob(urls[i]).catch(() => null)) got++;
  }
  entry.tiles = got;
  await idb('kept', 'readwrite', (s) => s.put(entry));
  return entry;
}

/** Stops keeping a node; a plan with no kept node left loses its recorded answers. */
export async function forgetNode(planId: string, nodeId: string): Promise<void> {
  await idb('kept', 'readwrite', (s) => s.delete(keyOf(planId, nodeId)));
  const left = (await keptNodes()).filter((k) => k.planId === planId);
  if (left.length === 0) {
    const db = await openDb();
    await new Promise<void>((resolve, reject) => {
      const tx = db.transaction('responses', 'readwrite');
      const index = tx.objectStore('responses').index('planId');
      const cursor = index.openCursor(IDBKeyRange.only(planId));
      cursor.onsuccess = () => {
        if (cursor.result) {
          cursor.result.delete();
          cursor.result.continue();
        }
      };
      tx.oncomplete = () => {
        db.close();
        resolve();
      };
      tx.onerror = () => reject(tx.error ?? new Error('IndexedDB delete failed'));
    });
  }
}

/** Bytes kept by earshot on this device (recorded answers and tiles), and what the browser reports in all. */
export async function storageUsed(): Promise<{ keptBytes: number; tileBytes: number; browserBytes: number | null }> {
  const rows = await idb<Array<{ url: string; bytes: number }>>('responses', 'readonly', (s) => s.getAll() as IDBRequest<Array<{ url: string; bytes: number }>>);
  let keptBytes = 0;
  let tileBytes = 0;
  for (const r of rows) {
    keptBytes += r.bytes;
    if (r.url.endsWith('.png')) tileBytes += r.bytes;
  }
  const estimate = navigator.storage?.estimate ? await navigator.storage.estimate().catch(() => null) : null;
  return { keptBytes, tileBytes, browserBytes: estimate?.usage ?? null };
}

/** Signing out: everything this device holds for earshot goes (kept answers, tiles, unsent changes). */
export async function clearDevice(): Promise<void> {
  if (!('indexedDB' in window)) return;
  for (const store of ['responses', 'kept', 'outbox']) await idb(store, 'readwrite', (s) => s.clear()).catch(() => undefined);
  navigator.serviceWorker?.controller?.postMessage({ type: 'earshot:cleared' });
}

// ---------- the outbox ----------

export const outbox = (): Promise<OutboxEntry[]> => idb<OutboxEntry[]>('outbox', 'readonly', (s) => s.getAll() as IDBRequest<OutboxEntry[]>);
const changed = () => window.dispatchEvent(new Event(outboxEvent));

/** True when a failed request means "no connection" (not an answer from the server). */
export const isNetworkFailure = (err: unknown): boolean => err instanceof TypeError || (err instanceof ApiError && err.code === 'offline');

export async function queueReading(planId: string, node: { id: string; name: string }, reading: ReadingInput, label: string): Promise<void> {
  await idb('outbox', 'readwrite', (s) => s.add({ kind: 'reading', planId, nodeId: node.id, nodeName: node.name, label, reading, createdAt: new Date().toISOString(), state: 'pending' } satisfies OutboxEntry));
  changed();
}

export async function queueInstallStatus(planId: string, node: { id: string; name: string; version: number }, installStatus: string): Promise<void> {
  await idb('outbox', 'readwrite', (s) => s.add({ kind: 'install-status', planId, nodeId: node.id, nodeName: node.name, label: `install status → ${installStatus}`, installStatus, version: node.version, createdAt: new Date().toISOString(), state: 'pending' } satisfies OutboxEntry));
  changed();
}

const put = (entry: OutboxEntry) => idb('outbox', 'readwrite', (s) => s.put(entry));
const remove = (id: number) => idb('outbox', 'readwrite', (s) => s.delete(id));

async function send(entry: OutboxEntry, version?: number): Promise<void> {
  if (entry.kind === 'reading' && entry.reading) {
    await postReading(entry.planId, entry.reading);
  } else {
    await request('PATCH', `/plans/${entry.planId}/nodes/${entry.nodeId}`, { installStatus: entry.installStatus, version: version ?? entry.version });
  }
}

let flushing: Promise<void> | null = null;

/** Sends what waits, oldest first; stops at the first network failure (the rest waits for the next try). */
export function flushOutbox(): Promise<void> {
  flushing ??= (async () => {
    try {
      for (const entry of await outbox()) {
        if (entry.state !== 'pending' || entry.id === undefined) continue;
        try {
          await send(entry);
          await remove(entry.id);
        } catch (err) {
          if (isNetworkFailure(err)) break;
          if (err instanceof ApiError && err.status === 409 && entry.kind === 'install-status') {
            const current = await request<FleetNode>('GET', `/plans/${entry.planId}/nodes/${entry.nodeId}`).catch(() => null);
            await put({ ...entry, state: 'conflict', problem: err.message, serverInstallStatus: current?.installStatus, serverVersion: current?.version });
          } else {
            await put({ ...entry, state: 'failed', problem: err instanceof Error ? err.message : String(err) });
          }
        }
      }
    } finally {
      flushing = null;
      changed();
    }
  })();
  return flushing;
}

/** A conflict, decided by the installer: keep what the server has, or send this change over it (with the server's current version). */
export async function resolveConflict(entry: OutboxEntry, choice: 'server' | 'mine'): Promise<void> {
  if (entry.id === undefined) return;
  if (choice === 'mine') await send(entry, entry.serverVersion);
  await remove(entry.id);
  changed();
}

export async function discardEntry(entry: OutboxEntry): Promise<void> {
  if (entry.id !== undefined) await remove(entry.id);
  changed();
}
