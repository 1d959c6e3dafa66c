/* Small helpers shared by the page's modules: element lookup and creation,
 * number and date formatting for people, error text, base64 decoding.
 * No state and no engine calls. */

export const $ = (id) => document.getElementById(id);

export function decodeBase64(text) {
  const clean = text.replace(/\s+/g, '');
  if (typeof Uint8Array.fromBase64 === 'function') return Uint8Array.fromBase64(clean);
  const bin = atob(clean);
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

export function el(tag, attrs, ...children) {
  const node = document.createElement(tag);
  if (attrs) {
    for (const [k, v] of Object.entries(attrs)) {
      if (v === null || v === undefined || v === false) continue;
      if (k === 'class') node.className = v;
      else node.setAttribute(k, v === true ? '' : String(v));
    }
  }
  for (const c of children) {
    if (c === null || c === undefined) continue;
    node.append(c instanceof Node ? c : String(c));
  }
  return node;
}

export function num(v) {
  if (typeof v === 'bigint') return Number(v);
  return typeof v === 'number' ? v : v === null || v === undefined ? NaN : Number(v);
}

/** A number for people: grouped thousands, `digits` significant figures for non-integers. */
export function fmt(v, digits = 4) {
  const x = num(v);
  if (!Number.isFinite(x)) return '—';
  if (Number.isInteger(x) && Math.abs(x) < 1e15) return x.toLocaleString('en-GB');
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-3 || a >= 1e9)) return x.toExponential(digits - 1);
  const decimals = Math.max(0, digits - 1 - Math.floor(Math.log10(a || 1)));
  return x.toLocaleString('en-GB', { maximumFractionDigits: Math.min(decimals, 8), minimumFractionDigits: 0 });
}

export function fmtFixed(v, decimals) {
  const x = num(v);
  return Number.isFinite(x) ? x.toFixed(decimals) : '—';
}

export function fmtMetres(v) {
  const x = num(v);
  if (!Number.isFinite(x)) return '—';
  if (Math.abs(x) >= 10000) return `${fmt(x / 1000, 4)}\u00a0km`;
  return `${fmt(x, 4)}\u00a0m`;
}

/** A time in words: "40 s", "about 4 min", "about 2 h" (ms in). */
export function fmtDuration(ms) {
  const s = num(ms) / 1000;
  if (!Number.isFinite(s)) return '—';
  if (s < 90) return `${fmt(Math.max(1, Math.round(s)))} s`;
  if (s < 5400) return `about ${fmt(Math.round(s / 60))} min`;
  return `about ${fmt(Math.round(s / 360) / 10)} h`;
}

export function fmtDays(days) {
  const x = num(days);
  if (!Number.isFinite(x)) return '—';
  if (x < 2) return `${fmt(x * 24, 3)}\u00a0hours`;
  return `${fmt(x, 4)}\u00a0days`;
}

/** Days since 1970-01-01 (UTC) to a date (and clock time if it has one). */
export function fmtTime(days, withClock) {
  const x = num(days);
  if (!Number.isFinite(x)) return String(days);
  const d = new Date(Math.round(x * 86400000));
  const iso = d.toISOString();
  return withClock ? `${iso.slice(0, 10)} ${iso.slice(11, 16)}` : iso.slice(0, 10);
}

export function plural(n, one, many) {
  return `${fmt(n)} ${num(n) === 1 ? one : many}`;
}

export function errorText(err) {
  if (!err) return 'Something went wrong.';
  if (typeof err === 'string') return err;
  let msg = String(err.message || err.code || 'Something went wrong.');
  const row = err.row;
  if (row !== null && row !== undefined && !new RegExp(`\\brow ${num(row)}\\b`).test(msg)) {
    const col = err.column ? `, column "${err.column}"` : '';
    msg = `row ${num(row)}${col}: ${msg}`;
  }
  return msg;
}

/** The one pattern of the page's downloads (the engine names its exports the
 * same way): cloister-<what>-<today>[-seed<seed>].<ext>, today in local time. */
export function downloadName(what, ext, seed) {
  const d = new Date();
  const day = `${d.getFullYear()}-${String(d.getMonth() + 1).padStart(2, '0')}-${String(d.getDate()).padStart(2, '0')}`;
  const s = seed === undefined || seed === null ? '' : `-seed${seed}`;
  return `cloister-${what}-${day}${s}.${ext}`;
}
