// Talking to tonebridged: JSON requests, its error bodies, the live event stream, and the
// one number format the page uses. The service does the maths; nothing here computes a
// measured value, it only rounds what comes back for display.

/** A failed request, with the service's stable error id and what to do about it. */
export class ApiError extends Error {
  constructor(status, body) {
    const e = (body && body.error) || { id: 'http.' + status, message: `the service answered ${status}`, hint: '' };
    super(e.hint ? `${e.message}. ${e.hint}` : e.message);
    this.id = e.id;
    this.status = status;
  }
}

/** api('/readings', {method: 'POST', body: {...}}) -> parsed JSON (null for 204). */
export async function api(path, { method = 'GET', body } = {}) {
  const options = { method, headers: {} };
  if (body !== undefined) {
    options.headers['Content-Type'] = 'application/json';
    options.body = JSON.stringify(body);
  }
  const r = await fetch(`/api/v1${path}`, options);
  const json = r.status === 204 ? null : await r.json().catch(() => null);
  if (!r.ok) throw new ApiError(r.status, json);
  return json;
}

// One EventSource for the whole page; modules subscribe by event name.
const handlers = new Map();
let source = null;
export function on(name, fn) {
  if (!handlers.has(name)) {
    handlers.set(name, []);
    if (source) attach(name);
  }
  handlers.get(name).push(fn);
}
function attach(name) {
  source.addEventListener(name, (e) => {
    let data = null;
    try { data = JSON.parse(e.data); } catch { return; }
    for (const fn of handlers.get(name)) fn(data);
  });
}
/** Opens /api/v1/events; onLost() when the stream drops (the browser reconnects itself). */
export function connectEvents(onLost) {
  source = new EventSource('/api/v1/events');
  for (const name of handlers.keys()) attach(name);
  source.onerror = onLost;
}

const PREFIXES = [[1e9, 'G'], [1e6, 'M'], [1e3, 'k'], [1, ''], [1e-3, 'm'], [1e-6, 'µ'], [1e-9, 'n'], [1e-12, 'p']];

/**
 * A value in engineering notation with only the digits its expanded uncertainty U
 * supports: U rounded to two significant digits, the value to the same place (GUM 7.2.6).
 * Without U, four significant digits. Returns {text, value, unit, u} for display.
 * quantity(6.8012e-6, 'F', 3.5e-9) -> {text: '6.8012 µF', u: '± 0.0035 µF', ...}
 */
export function quantity(value, unit, u) {
  if (value === null || value === undefined || !Number.isFinite(value)) return { text: '—', number: '—', unit, u: '' };
  let k = PREFIXES.findIndex(([s]) => Math.abs(value) >= s);
  if (k < 0) k = PREFIXES.length - 1;
  // 999.96 Hz shown to four digits is 1.000 kHz, not 1000 Hz.
  if (k > 0 && Math.abs(Number((value / PREFIXES[k][0]).toPrecision(4))) >= 1000) k -= 1;
  const [scale, p] = PREFIXES[k];
  const v = value / scale;
  let number;
  let uText = '';
  if (Number.isFinite(u) && u > 0) {
    const us = u / scale;
    const decimals = Math.max(0, Math.min(9, 1 - Math.floor(Math.log10(us))));
    number = v.toFixed(decimals);
    uText = `± ${us.toFixed(decimals)} ${p}${unit}`;
  } else {
    number = v.toPrecision(4);
  }
  return { text: `${number} ${p}${unit}`, number, unit: `${p}${unit}`, u: uText };
}

/** A number without prefixes (D, Q, degrees), rounded to its U as quantity() does. */
export function plain(value, u) {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (Number.isFinite(u) && u > 0) return value.toFixed(Math.max(0, Math.min(9, 1 - Math.floor(Math.log10(u)))));
  return Math.abs(value) >= 1e5 || (value !== 0 && Math.abs(value) < 1e-3) ? value.toExponential(3) : value.toPrecision(4);
}

/** Plain engineering text without an uncertainty: si(1000, 'Hz') -> '1.000 kHz'. */
export function si(value, unit) {
  return quantity(value, unit).text;
}

/** Shows an error (or clears it with null) in an element with role="alert". */
export function showError(el, e) {
  el.textContent = e ? (e.message || String(e)) : '';
}

export const $ = (id) => document.getElementById(id);

export function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (v === undefined || v === null || v === false) continue;
    if (k.startsWith('on')) node.addEventListener(k.slice(2), v);
    else if (k === 'text') node.textContent = v;
    else node.setAttribute(k, v === true ? '' : v);
  }
  node.append(...children.filter((c) => c !== null && c !== undefined));
  return node;
}
