// earshot service worker: the installer view with no signal.
// - The app shell (index.html and the bundled assets) is kept in Cache Storage:
//   navigations go to the network first and fall back to the kept shell;
//   hashed assets are served from the cache first.
// - API answers for the nodes an installer kept (web/src/offline/device.ts marks them in
//   IndexedDB) are recorded on their way through while online and answered from
//   IndexedDB when the network is gone. Nothing is recorded for plans with no kept node.
// - Writes are never queued here: the page queues readings and install-status changes
//   itself, shows them as "not yet sent" and sends them when the connection returns.
// Plain JavaScript: Vite copies web/public/ as is, so this file is served at /sw.js.
/* global self, caches, Response, indexedDB, atob */
'use strict';

const SHELL_CACHE = 'earshot-shell-v1';
const DB_NAME = 'earshot-offline';
const DB_VERSION = 1;
/** Larger answers are not kept (a GeoTIFF export is not a visit's business). */
const MAX_KEPT_BYTES = 5 * 1024 * 1024;
/** Global answers every kept visit needs (who is signed in, the kit catalog, the coverage legend). */
const GLOBAL_PATHS = [/^\/api\/v1\/me$/, /^\/api\/v1\/client-settings$/, /^\/api\/v1\/kit\//, /^\/api\/v1\/coverage\/legend$/];
// A 1×1 transparent PNG for a map tile that was not kept (offline only).
const EMPTY_PNG = Uint8Array.from(atob('iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNkYPhfDwAChwGA60e6kgAAAABJRU5ErkJggg=='), (c) => c.charCodeAt(0));

function openDb() {
  return new Promise((resolve, reject) => {
    const request = indexedDB.open(DB_NAME, DB_VERSION);
    // Same schema as web/src/offline/device.ts (whichever opens first creates it).
    request.onupgradeneeded = () => {
      const db = request.result;
      if (!db.objectStoreNames.contains('responses')) db.createObjectStore('responses', { keyPath: 'url' }).createIndex('planId', 'planId');
      if (!db.objectStoreNames.contains('kept')) db.createObjectStore('kept', { keyPath: 'key' }).createIndex('planId', 'planId');
      if (!db.objectStoreNames.contains('outbox')) db.createObjectStore('outbox', { keyPath: 'id', autoIncrement: true });
    };
    request.onsuccess = () => resolve(request.result);
    request.onerror = () => reject(request.error);
  });
}

function idb(storeName, mode, run) {
  return openDb().then(
    (db) =>
      new Promise((resolve, reject) => {
        const tx = db.transaction(storeName, mode);
        const result = run(tx.objectStore(storeName));
        tx.oncomplete = () => {
          db.close();
          resolve(result && 'result' in result ? result.result : undefined);
        };
        tx.onerror = () => {
          db.close();
          reject(tx.error);
        };
      }),
  );
}

const planOf = (path) => /^\/api\/v1\/plans\/([^/]+)/.exec(path)?.[1] ?? null;

/** Should this GET be recorded for offline use? Only for plans with a kept node (and the global answers, once anything is kept). */
async function keepable(path) {
  if (path.endsWith('/events')) return false;
  const planId = planOf(path);
  if (planId) {
    const count = await idb('kept', 'readonly', (store) => store.index('planId').count(decodeURIComponent(planId)));
    return count > 0;
  }
  if (!GLOBAL_PATHS.some((re) => re.test(path))) return false;
  const total = await idb('kept', 'readonly', (store) => store.count());
  return total > 0;
}

async function record(key, path, response) {
  const type = response.headers.get('content-type') ?? '';
  if (!(type.startsWith('application/json') || type.startsWith('image/png'))) return;
  const body = await response.arrayBuffer();
  if (body.byteLength > MAX_KEPT_BYTES) return;
  const planId = planOf(path);
  await idb('responses', 'readwrite', (store) =>
    store.put({ url: key, planId: planId ? decodeURIComponent(planId) : null, contentType: type, status: response.status, body, bytes: body.byteLength, storedAt: new Date().toISOString() }),
  );
}

async function fromDevice(key, path) {
  const kept = await idb('responses', 'readonly', (store) => store.get(key)).catch(() => undefined);
  if (kept) return new Response(kept.body, { status: kept.status, headers: { 'content-type': kept.contentType, 'x-earshot-offline': 'kept', 'x-earshot-stored-at': kept.storedAt } });
  if (/\/tiles\/\d+\/\d+\/\d+\.png$/.test(path)) return new Response(EMPTY_PNG, { status: 200, headers: { 'content-type': 'image/png', 'x-earshot-offline': 'missing' } });
  return new Response(JSON.stringify({ error: { code: 'offline', message: 'You are offline and this was not kept on this device.' } }), { status: 503, headers: { 'content-type': 'application/json', 'x-earshot-offline': 'missing' } });
}

async function apiGet(request, url) {
  const key = url.pathname + url.search;
  try {
    const response = await fetch(request);
    if (response.ok && response.status === 200 && (await keepable(url.pathname))) {
      await record(key, url.pathname, response.clone()).catch(() => undefined);
    }
    return response;
  } catch {
    return fromDevice(key, url.pathname);
  }
}

async function shellFiles() {
  const response = await fetch('/', { cache: 'no-store' });
  const html = await response.clone().text();
  const assets = [...html.matchAll(/(?:src|href)="(\/assets\/[^"]+)"/g)].map((m) => m[1]);
  return { response, assets };
}

self.addEventListener('install', (event) => {
  event.waitUntil(
    (async () => {
      const cache = await caches.open(SHELL_CACHE);
      const { response, assets } = await shellFiles();
      await cache.put('/', response);
      await cache.addAll(assets);
      await self.skipWaiting();
    })(),
  );
});

self.addEventListener('activate', (event) => {
  event.waitUntil(
    (async () => {
      for (const name of await caches.keys()) if (name.startsWith('earshot-shell-') && name !== SHELL_CACHE) await caches.delete(name);
      await self.clients.claim();
    })(),
  );
});

self.addEventListener('message', (event) => {
  // Signing out: the page has emptied IndexedDB; the shell stays (it holds no data).
  if (event.data && event.data.type === 'earshot:cleared') event.source?.postMessage({ type: 'earshot:cleared:ack' });
});

self.addEventListener('fetch', (event) => {
  const request = event.request;
  if (request.method !== 'GET') return; // writes go to the network; the page queues them when it fails
  const url = new URL(request.url);
  if (url.origin !== self.location.origin) return;
  if (url.pathname.startsWith('/api/v1/')) {
    event.respondWith(apiGet(request, url));
    return;
  }
  if (request.mode === 'navigate') {
    event.respondWith(
      (async () => {
        try {
          const response = await fetch(request);
          if (response.ok && url.pathname === '/') (await caches.open(SHELL_CACHE)).put('/', response.clone());
          return response;
        } catch {
          const kept = await caches.match('/');
          return kept ?? new Response('earshot is offline and the app was not kept on this device.', { status: 503, headers: { 'content-type': 'text/plain' } });
        }
      })(),
    );
    return;
  }
  if (url.pathname.startsWith('/assets/')) {
    event.respondWith(
      (async () => {
        const cache = await caches.open(SHELL_CACHE);
        const hit = await cache.match(request);
        if (hit) return hit;
        const response = await fetch(request);
        if (response.ok) await cache.put(request, response.clone());
        return response;
      })(),
    );
  }
});
