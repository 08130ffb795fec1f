// Terrain upload with progress. fetch() cannot report upload progress, so this one call uses
// XMLHttpRequest (same cookie, same CSRF header, same error shape as api.ts).
import { ApiError, type TerrainLayer } from './api.ts';

export interface UploadProgress {
  loadedBytes: number;
  totalBytes: number;
}

export interface TerrainUpload {
  promise: Promise<TerrainLayer>;
  abort(): void;
}

/** Sends the GeoTIFF as the raw body (image/tiff); kind and name ride in the query. */
export function uploadTerrain(planId: string, file: File, options: { kind: 'elevation' | 'clutter'; name?: string }, onProgress: (p: UploadProgress) => void): TerrainUpload {
  const xhr = new XMLHttpRequest();
  const query = new URLSearchParams({ kind: options.kind });
  if (options.name) query.set('name', options.name);
  const promise = new Promise<TerrainLayer>((resolve, reject) => {
    xhr.open('POST', `/api/v1/plans/${encodeURIComponent(planId)}/terrain?${query.toString()}`);
    xhr.withCredentials = true;
    xhr.setRequestHeader('content-type', 'image/tiff');
    xhr.setRequestHeader('accept', 'application/json');
    xhr.setRequestHeader('x-earshot-request', '1');
    xhr.upload.onprogress = (event) => onProgress({ loadedBytes: event.loaded, totalBytes: event.lengthComputable ? event.total : file.size });
    xhr.onload = () => {
      let body: unknown = null;
      try {
        body = xhr.responseText ? JSON.parse(xhr.responseText) : null;
      } catch {
        body = null;
      }
      if (xhr.status >= 200 && xhr.status < 300) resolve(body as TerrainLayer);
      else {
        const error = (body as { error?: { code?: string; message?: string } } | null)?.error;
        reject(new ApiError(xhr.status, error?.code ?? `http_${xhr.status}`, error?.message ?? (xhr.statusText || `HTTP ${xhr.status}`)));
      }
    };
    xhr.onerror = () => reject(new ApiError(0, 'network', 'the upload was interrupted (network error)'));
    xhr.onabort = () => reject(new DOMException('upload cancelled', 'AbortError'));
    xhr.send(file);
  });
  return { promise, abort: () => xhr.abort() };
}

export interface LonLatBox {
  west: number;
  south: number;
  east: number;
  north: number;
}

/** The extent of a layer as served (an object, or [west, south, east, north]). */
export function layerBox(layer: TerrainLayer): LonLatBox | null {
  const e = layer.extent;
  if (!e) return null;
  if (Array.isArray(e)) return e.length === 4 ? { west: e[0], south: e[1], east: e[2], north: e[3] } : null;
  return e;
}

export const insideBox = (box: LonLatBox, lat: number, lon: number): boolean => lat >= box.south && lat <= box.north && lon >= box.west && lon <= box.east;
