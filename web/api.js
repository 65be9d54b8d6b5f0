// halotank page: the HTTP JSON API (fetch wrapper, bearer token kept for the browser session).
//
// Reads from the daemon's own machine need no token; from another host they do unless the server has
// [http] open_reads. State-changing calls send `Authorization: Bearer <token>`; the token is asked for once
// ("unlock") and kept in sessionStorage, so it is forgotten when the tab or browser closes.

const TOKEN_KEY = "halotank.token";

/** An answer that was not 2xx, with the server's own message when it sent one. */
export class ApiError extends Error {
  constructor(status, message, path) {
    super(message);
    this.status = status;
    this.path = path;
  }
}

export function token() {
  try {
    return sessionStorage.getItem(TOKEN_KEY) || "";
  } catch (_) {
    return "";
  }
}

export function setToken(value) {
  try {
    if (value) sessionStorage.setItem(TOKEN_KEY, value);
    else sessionStorage.removeItem(TOKEN_KEY);
  } catch (_) {
    /* storage refused (private mode): the token lives until reload only */
  }
  for (const fn of listeners) fn(Boolean(value));
}

const listeners = [];
/** Calls `fn(unlocked)` whenever the token is set or forgotten. */
export function onTokenChange(fn) {
  listeners.push(fn);
}

async function request(method, path, body, { timeoutMs = 15000 } = {}) {
  const headers = { Accept: "application/json" };
  if (body !== undefined) headers["Content-Type"] = "application/json";
  // Once unlocked, every request carries the token: changes need it, and so do reads of a page opened from
  // another host (unless the server has [http] open_reads).
  const t = token();
  if (t) headers.Authorization = `Bearer ${t}`;
  const ctrl = new AbortController();
  const timer = setTimeout(() => ctrl.abort(), timeoutMs);
  let res;
  try {
    res = await fetch(path, {
      method,
      headers,
      body: body === undefined ? undefined : JSON.stringify(body),
      signal: ctrl.signal,
      cache: "no-store",
    });
  } catch (e) {
    const why = e && e.name === "AbortError" ? "no answer within " + timeoutMs / 1000 + " s" : String(e.message || e);
    throw new ApiError(0, `The halotank server did not answer (${why}). Is the daemon running?`, path);
  } finally {
    clearTimeout(timer);
  }
  let data = null;
  const text = await res.text();
  if (text) {
    try {
      data = JSON.parse(text);
    } catch (_) {
      data = null;
    }
  }
  if (!res.ok) {
    const message =
      (data && data.error && data.error.message) || `${method} ${path} answered ${res.status} ${res.statusText}`;
    if (res.status === 401) {
      const sentence = message.replace(/[.\s]*$/, ".");
      const hint = /no HTTP token is configured/.test(message)
        ? ""
        : " The token was forgotten: Unlock again with the daemon's HTTP token.";
      throw new ApiError(401, `Refused (401): ${sentence}${hint}`, path);
    }
    throw new ApiError(res.status, message, path);
  }
  return data;
}

const enc = encodeURIComponent;

function query(params) {
  const parts = [];
  for (const [k, v] of Object.entries(params)) {
    if (v !== undefined && v !== null && v !== "") parts.push(`${enc(k)}=${enc(v)}`);
  }
  return parts.length ? "?" + parts.join("&") : "";
}

export const api = {
  tanks: () => request("GET", "/api/tanks"),
  tank: (id) => request("GET", `/api/tanks/${enc(id)}`),
  history: (id, from, to, points) =>
    request("GET", `/api/tanks/${enc(id)}/history` + query({ from, to, points }), undefined, { timeoutMs: 30000 }),
  alerts: (params) => request("GET", "/api/alerts" + query(params)),
  ack: (id, by, note) => request("POST", `/api/alerts/${enc(id)}/ack`, { by, note: note || undefined }),
  ackRequest: (id) => request("GET", `/api/ack-requests/${enc(id)}`),
  schedules: (params) => request("GET", "/api/schedules" + query(params)),
  schedule: (id) => request("GET", `/api/schedules/${enc(id)}`),
  plan: (form) => request("POST", "/api/plan", form),
  startSchedule: (tank, plan, by) => request("POST", "/api/schedules", { tank, plan, by }),
  scheduleAction: (id, action, by) =>
    request("POST", `/api/schedules/${enc(id)}/${action}`, { by: by || undefined }),
  stepDone: (id, step, by) => request("POST", `/api/schedules/${enc(id)}/step-done`, { step, by }),
};
