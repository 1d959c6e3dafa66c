/* Cloister worker body. The page builds this worker from a Blob URL whose
 * text is the wasm-bindgen glue (which defines the global `wasm_bindgen`)
 * followed by this file. The worker owns the one analysis Session.
 *
 * Protocol: the page posts {id, method, args}; the worker answers
 * {id, ok: true, result} or {id, ok: false, error: {code, message, row, column}, fatal}.
 * `fatal` means the wasm instance trapped and is dead: the page must start a
 * new worker. The first call must be {method: 'init', args: [WebAssembly.Module]}. */
'use strict';

let session = null;
let memory = null;

const SESSION_METHODS = new Set([
  'loadEvents', 'loadControls', 'clearControls', 'loadArea', 'clearArea',
  'setAreaFallback', 'study', 'summary', 'mapLayers', 'rejections',
]);

function isFatal(err) {
  return err instanceof WebAssembly.RuntimeError;
}

/** Turns whatever was thrown into a plain, cloneable {code, message, row, column}. */
function plainError(err) {
  if (err instanceof Map) err = Object.fromEntries(err);
  if (err && typeof err === 'object' && !(err instanceof Error)) {
    const out = {
      code: String(err.code ?? 'error'),
      message: String(err.message ?? JSON.stringify(err)),
      row: err.row ?? (err.at && err.at.row) ?? null,
      column: err.column ?? (err.at && err.at.column) ?? null,
    };
    // A file that parsed but could not be used carries its rejection summary.
    if (err.rows_read !== undefined) out.rows_read = Number(err.rows_read);
    if (Array.isArray(err.by_reason)) out.by_reason = err.by_reason;
    if (Array.isArray(err.rejections)) out.rejections = err.rejections;
    return out;
  }
  if (typeof err === 'string') return { code: 'error', message: err, row: null, column: null };
  return {
    code: isFatal(err) ? 'engine_stopped' : 'internal',
    message: String((err && err.message) || err),
    row: null,
    column: null,
  };
}

/** All state at once, so the page redraws from one answer. */
function snapshot() {
  const out = { study: null, summary: null, summary_error: null, layers: null, rejected: { events: 0, controls: 0 } };
  out.study = session.study() ?? null;
  try {
    out.layers = session.mapLayers();
  } catch (err) {
    if (isFatal(err)) throw err;
  }
  if (out.study) {
    try {
      out.summary = session.summary();
    } catch (err) {
      if (isFatal(err)) throw err;
      out.summary_error = plainError(err);
    }
  }
  out.reasons = { events: null, controls: null };
  for (const layer of ['events', 'controls']) {
    try {
      out.rejected[layer] = Number(session.rejections(layer, 0, 0).total);
      out.reasons[layer] = reasonCounts(layer, out.rejected[layer]);
    } catch (err) {
      if (isFatal(err)) throw err;
      out.rejected[layer] = null;
    }
  }
  return out;
}

/** Rejected rows counted by reason, in order of first appearance (a tally for
 * the data-quality panel, current after every change of study area). */
function reasonCounts(layer, total) {
  const LIMIT = 200000;
  if (!(total > 0) || total > LIMIT) return total > LIMIT ? null : [];
  const counts = new Map();
  for (let offset = 0; offset < total; offset += 10000) {
    const page = session.rejections(layer, offset, 10000);
    for (const r of page.rows) {
      const c = counts.get(r.reason);
      if (c) c.count++;
      else counts.set(r.reason, { reason: r.reason, reason_text: r.reason_text, count: 1 });
    }
  }
  return Array.from(counts.values());
}

/** Buffers that can be handed over instead of copied (not views into wasm memory). */
function transferables(value, depth = 0, out = []) {
  if (!value || typeof value !== 'object' || depth > 3) return out;
  if (ArrayBuffer.isView(value)) {
    const buf = value.buffer;
    if ((!memory || buf !== memory.buffer) && value.byteOffset === 0 && value.byteLength === buf.byteLength && !out.includes(buf)) {
      out.push(buf);
    }
    return out;
  }
  if (Array.isArray(value)) return out; // plain number arrays: nothing to transfer
  for (const key of Object.keys(value)) transferables(value[key], depth + 1, out);
  return out;
}

self.onmessage = (event) => {
  const { id, method, args = [] } = event.data || {};
  try {
    let result;
    if (method === 'init') {
      const exports = wasm_bindgen.initSync({ module: args[0] });
      memory = exports && exports.memory ? exports.memory : null;
      session = new wasm_bindgen.Session();
      result = { version: wasm_bindgen.version() };
    } else if (!session) {
      throw { code: 'not_ready', message: 'The engine is not ready yet.' };
    } else if (method === 'snapshot') {
      result = snapshot();
    } else if (SESSION_METHODS.has(method)) {
      result = session[method](...args);
      if (result === undefined) result = null;
    } else {
      throw { code: 'unknown_method', message: `Unknown request "${method}".` };
    }
    self.postMessage({ id, ok: true, result }, transferables(result));
  } catch (err) {
    const fatal = isFatal(err) || method === 'init';
    if (fatal) session = null;
    self.postMessage({ id, ok: false, error: plainError(err), fatal });
  }
};
