// The page's one way to the server: the public API, with the key kept in this tab.

const KEY = 'strandline-token';

/** An API answer that was not 2xx, with its status and the server's message. */
export class ApiError extends Error {
  constructor(status, message, code) {
    super(message);
    this.status = status;
    this.code = code;
  }
}

export const hasKey = () => Boolean(sessionStorage.getItem(KEY));
export const setKey = (key) => sessionStorage.setItem(KEY, key);

const listeners = new Set();
/** Called with the status when the server wants a key (401) or a larger one (403). */
export const onKeyNeeded = (fn) => listeners.add(fn);

/** Calls the API; JSON in and out. */
export async function api(path, { method = 'GET', body } = {}) {
  const key = sessionStorage.getItem(KEY);
  const res = await fetch(path, {
    method,
    // Always the store as it stands: a merge's redirect or a list may change at any moment.
    cache: 'no-store',
    headers: {
      accept: 'application/json',
      ...(body === undefined ? {} : { 'content-type': 'application/json' }),
      ...(key ? { authorization: `Bearer ${key}` } : {}),
    },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await res.text();
  let parsed = null;
  try {
    parsed = text ? JSON.parse(text) : null;
  } catch {
    parsed = null;
  }
  if (res.status === 401 || res.status === 403) for (const fn of listeners) fn(res.status);
  if (!res.ok) throw new ApiError(res.status, parsed?.error?.message ?? `the server answered ${res.status}`, parsed?.error?.code);
  return parsed;
}

/** A query string from the set fields of an object. */
export function query(fields) {
  const p = new URLSearchParams();
  for (const [k, v] of Object.entries(fields)) if (v !== undefined && v !== null && v !== '') p.set(k, String(v));
  return p.toString();
}

/** What went wrong with a call, in words; `needs` says what the call was for ("Corrections need"). */
export function explain(err, needs) {
  if (!(err instanceof ApiError)) return `The server could not be reached: ${err.message}`;
  if (err.status === 401 || err.status === 403) return `${needs} an API key with the manage scope: enter one above.`;
  return err.message;
}
