// The Zones view's calls to the JSON API, through api.js (the key as a bearer token; a refusal
// throws ApiError with the server's message). Paths and bodies as in the OpenAPI document.
import { api, apiBlob } from './api.js';

const cameraPath = (id) => `/api/cameras/${encodeURIComponent(id)}`;

/** GET /api/cameras: the cameras with their zones and model. */
export async function fetchCameras() {
  return (await api('/api/cameras')).cameras;
}

/** GET /api/settings: the display settings (`lowStock` per "camera/zone", `defaultLowStock`). */
export function fetchSettings() {
  return api('/api/settings');
}

/** PUT /api/settings with changed low-stock marks ("camera/zone" → share, or null for the default); answers the settings. */
export function saveLowStock(lowStock) {
  return api('/api/settings', { method: 'PUT', body: { lowStock } });
}

/** PUT /api/cameras/{id}/zones; answers `{ zones }` as stored. */
export function saveZones(cameraId, zones) {
  return api(`${cameraPath(cameraId)}/zones`, { method: 'PUT', body: { zones } });
}

/** GET /api/cameras/{id}/zones/history: the stored changes, oldest first. */
export async function fetchZoneHistory(cameraId) {
  return (await api(`${cameraPath(cameraId)}/zones/history`)).history;
}

/** The learned empty scene (GET …/background.png, admin only) as an ImageBitmap. */
export async function fetchBackground(cameraId) {
  const { blob } = await apiBlob(`${cameraPath(cameraId)}/background.png`);
  return createImageBitmap(blob);
}

/** GET …/mask as JSON in cells of 8 pixels: `{ width, height, rows }`, each row a string of "0" and "1" (admin only). */
export function fetchMask(cameraId) {
  return api(`${cameraPath(cameraId)}/mask?format=json&cell=8`);
}

/** GET …/person-size: the size learned from people seen alone (`state`, and when ready `rows`, `intercept`, `slope`, `aspect`, `supporting`). */
export function fetchPersonSize(cameraId) {
  return api(`${cameraPath(cameraId)}/person-size`);
}
