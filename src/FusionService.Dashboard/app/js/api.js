// Calls to the service's keyed API. The read key lives in sessionStorage (gone when the tab closes).

const KEY_NAME = 'fusionservice.readKey';

/** The endpoint is not offered by this service (404 or 405 for the route itself), or the item is missing. */
export class NotAvailableError extends Error {
  constructor(path, status, detail) {
    super(detail || `not available on this service (HTTP ${status})`);
    this.path = path;
    this.status = status;
  }
}

/** The key was refused (401) or lacks the role (403). */
export class KeyRefusedError extends Error {
  constructor(status, detail) {
    super(detail || `key refused (HTTP ${status})`);
    this.status = status;
  }
}

export function storedKey() {
  return sessionStorage.getItem(KEY_NAME);
}

export function storeKey(key) {
  sessionStorage.setItem(KEY_NAME, key);
}

export function forgetKey() {
  sessionStorage.removeItem(KEY_NAME);
}

async function problemDetail(response) {
  try {
    const body = await response.json();
    return body.detail || body.title || '';
  } catch {
    return '';
  }
}

async function call(method, path, key) {
  const response = await fetch(path, {
    method,
    headers: { Authorization: `Bearer ${key ?? storedKey() ?? ''}`, Accept: 'application/json' },
    cache: 'no-store',
  });
  if (response.status === 401 || response.status === 403) {
    throw new KeyRefusedError(response.status, await problemDetail(response));
  }
  if (response.status === 404 || response.status === 405) {
    throw new NotAvailableError(path, response.status, await problemDetail(response));
  }
  if (!response.ok) {
    const detail = await problemDetail(response);
    throw new Error(`${method} ${path}: HTTP ${response.status}${detail ? ` — ${detail}` : ''}`);
  }
  return response.json();
}

/** GET a JSON document with the stored key (or an explicit one, at sign-in). */
export function getJson(path, key) {
  return call('GET', path, key);
}

/** POST without a body, answering JSON. */
export function postJson(path) {
  return call('POST', path);
}

/** Query string from an object, skipping null and undefined values. */
export function query(params) {
  const q = new URLSearchParams();
  for (const [name, value] of Object.entries(params)) {
    if (value !== null && value !== undefined) q.set(name, String(value));
  }
  const s = q.toString();
  return s ? `?${s}` : '';
}

/** Describes an error for a panel: "not available", "key refused" or the message. */
export function describeError(error, what) {
  if (error instanceof NotAvailableError) {
    return `${what}: not available on this service yet (HTTP ${error.status}${error.message && !error.message.startsWith('not available') ? `: ${error.message}` : ''}).`;
  }
  if (error instanceof KeyRefusedError) {
    return `${what}: the key was refused (${error.message}).`;
  }
  return `${what}: ${error.message}`;
}
