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
let wasmModule = null; // kept to start helper workers
let helperUrl = null; // Blob URL of this worker's own source, made here
let stepId = null; // the request whose one long step is running now

/** Called by the engine during one long step with the fraction done. */
self.cloisterProgress = (fraction) => {
  if (stepId !== null) self.postMessage({ id: stepId, progress: { fraction } });
};

/** Any public Session method may be called by name (analysis modules add
 * their own in src/web/*.rs); the wasm-bindgen internals may not. */
function isSessionMethod(name) {
  return typeof name === 'string' && /^[a-z][A-Za-z0-9]*$/.test(name) && name !== 'free' &&
    name !== 'constructor' && session && typeof session[name] === 'function';
}

// ---------- long jobs: batches, progress, cancel ----------
// A job is three Session methods: start(params) -> {total}, step(k) -> done
// (count so far), finish() -> result. The worker runs batches sized to take
// about BATCH_MS each and yields between them, so a 'cancel' message is read
// within a fraction of a second and progress is posted after every batch.
const BATCH_MS = 120;
const jobs = new Map(); // id -> {cancelled}

/** `spec.batchMultiple` (optional, a whole number): batches and pieces are
 * rounded up to a multiple of it, for a job whose step serves that many
 * simulations at the cost of about one (the case–control scan runs eight
 * chance runs per pass over its circles). */
function roundBatch(spec, k) {
  const m = Math.max(1, Math.floor(Number(spec && spec.batchMultiple)) || 1);
  return Math.ceil(Math.max(1, k) / m) * m;
}

function runJob(id, spec) {
  const { start, step, finish, params } = spec || {};
  for (const m of [start, step, finish]) {
    if (!isSessionMethod(m)) throw { code: 'unknown_method', message: `Unknown job step "${m}".` };
  }
  const job = { cancelled: false, waiting: false, go: null };
  const { total } = startJob(id, spec, job, 1);
  let k = roundBatch(spec, 1);
  let done = 0;
  const tick = () => {
    try {
      if (job.cancelled) {
        endCancelled(id);
        return;
      }
      const t0 = performance.now();
      done = Number(session[step](k));
      const dt = performance.now() - t0;
      k = roundBatch(spec, adapt(k, k, dt, BATCH_MS));
      if (done >= total) {
        endFinished(id, finish);
        return;
      }
      self.postMessage({ id, progress: { done, total } });
      setTimeout(tick, 0);
    } catch (err) {
      endFailed(id, err);
    }
  };
  begin(id, job, total, tick);
}

/** Runs a job's `start` step and times it. When the spec sets
 * `confirm_above_ms` and the run would take longer (the start step computes
 * the observed curve, which costs about one simulation: estimate = its time
 * × simulations / workers), the job waits for 'resume' (or 'cancel') before
 * it simulates. Returns {total}. */
function startJob(id, spec, job, workers) {
  const t0 = performance.now();
  // A start that is long in itself (the scan building its circles) reports
  // the fraction done when the spec sets `startProgress`.
  if (spec.startProgress) {
    stepId = id;
    wasm_bindgen.beginProgress();
  }
  let info;
  try {
    info = session[spec.start](spec.params ?? {});
  } finally {
    stepId = null;
  }
  const startMs = performance.now() - t0;
  const total = Number(info && info.total);
  jobs.set(id, job);
  // A start step that measures its own estimate (the scan times a few
  // chance runs) gives it as `estimate_ms`.
  const own = info && typeof info.estimate_ms === 'number' ? info.estimate_ms : NaN;
  const estimateMs = Number.isFinite(own) ? own / Math.max(1, workers) : (startMs * total) / Math.max(1, workers);
  const limit = Number(spec.confirm_above_ms);
  job.first = { done: 0, total, start_ms: startMs, estimate_ms: estimateMs, workers, started: info };
  if (limit > 0 && estimateMs > limit) {
    job.waiting = true;
    job.first.waiting = true;
  }
  return { total };
}

/** Reports the first progress (with the estimate) and starts the ticks, or
 * waits for 'resume' when the job asked to be confirmed. */
function begin(id, job, total, tick) {
  self.postMessage({ id, progress: job.first });
  if (job.waiting) job.go = () => setTimeout(tick, 0);
  else setTimeout(tick, 0);
}

/** The three ways a job ends: each forgets the job and answers the page. */
function endCancelled(id) {
  jobs.delete(id);
  self.postMessage({ id, ok: false, error: { code: 'cancelled', message: 'Cancelled.', row: null, column: null }, fatal: false });
}

function endFinished(id, finish) {
  jobs.delete(id);
  const result = session[finish]();
  self.postMessage({ id, ok: true, result }, transferables(result));
}

function endFailed(id, err) {
  jobs.delete(id);
  const fatal = isFatal(err);
  if (fatal) session = null;
  self.postMessage({ id, ok: false, error: plainError(err), fatal });
}

// ---------- the same job spread over helper workers ----------
// A job whose spec has `parallel: {share, helperStart, simulate, add}` can be
// split: pieces from..to are computed by `simulate(from, to)`, here and in
// helper workers (copies of this worker started from the same script and
// wasm module, given `share()`), and handed back to the job in order with
// `add(from, curves)`. Piece j of a run is the same wherever it is
// computed, so the result is identical to one worker's. A helper that
// fails gives its piece back; Cancel stops the helpers at once.
// `parallel.minPiece` (optional) is the smallest piece handed out, for a job
// whose piece has a large fixed cost (the random labelling test visits every
// pair once per piece, whatever its size).
const HELPER_MS = 400;

function helperCount() {
  const cores = Number(self.navigator && self.navigator.hardwareConcurrency) || 1;
  if (typeof Worker !== 'function' || !wasmModule || !helperUrl) return 0;
  return Math.max(0, Math.min(cores - 1, 7));
}

/** New batch or piece size: aim for `target` ms, changing by at most 4x. */
function adapt(size, did, ms, target) {
  return Math.max(1, Math.min(size * 4, Math.round(did * target / Math.max(ms, 1))));
}

function runParallelJob(id, spec) {
  const { start, finish, params, parallel } = spec;
  for (const m of [start, finish, parallel.share, parallel.simulate, parallel.add]) {
    if (!isSessionMethod(m)) throw { code: 'unknown_method', message: `Unknown job step "${m}".` };
  }
  const job = { cancelled: false, waiting: false, go: null, helpers: [] };
  const { total } = startJob(id, spec, job, 1 + helperCount());
  let next = 0;
  let done = 0;
  let k = 1;
  let reported = -1;
  const ready = new Map(); // from -> curves, waiting for their turn
  const returned = []; // pieces given back by failed helpers
  const minPiece = Math.max(1, Math.floor(Number(parallel.minPiece)) || 1);
  const take = (size) => {
    if (returned.length) return returned.shift();
    if (next >= total) return null;
    const from = next;
    next = Math.min(total, next + roundBatch(spec, Math.max(size, minPiece)));
    return [from, next];
  };
  const flush = () => {
    while (ready.has(done)) {
      const curves = ready.get(done);
      ready.delete(done);
      done = Number(session[parallel.add](done, curves));
    }
  };
  const stopHelpers = () => {
    for (const h of job.helpers) h.stop();
    job.helpers = [];
  };
  const startHelpers = () => {
    const share = session[parallel.share]();
    for (let i = 0; i < helperCount(); i++) startHelper(job, share, parallel, take, (from, curves) => ready.set(from, curves), (piece) => returned.push(piece));
  };

  const tick = () => {
    try {
      if (job.cancelled) {
        stopHelpers();
        endCancelled(id);
        return;
      }
      flush();
      const piece = done < total ? take(k) : null;
      if (piece) {
        const t0 = performance.now();
        ready.set(piece[0], session[parallel.simulate](piece[0], piece[1]));
        k = adapt(k, piece[1] - piece[0], performance.now() - t0, BATCH_MS);
        flush();
      }
      if (done >= total) {
        stopHelpers();
        endFinished(id, finish);
        return;
      }
      if (done !== reported) {
        reported = done;
        self.postMessage({ id, progress: { done, total, workers: 1 + job.helpers.filter((h) => h.alive).length } });
      }
      // Nothing left to take: wait for the helpers' pieces.
      setTimeout(tick, piece ? 0 : 15);
    } catch (err) {
      stopHelpers();
      endFailed(id, err);
    }
  };
  begin(id, job, total, () => { if (!job.cancelled) startHelpers(); tick(); });
}

/** Starts one helper worker that takes pieces until none are left. */
function startHelper(job, share, parallel, take, deliver, giveBack) {
  let worker;
  try {
    worker = new Worker(helperUrl);
  } catch (_) {
    return; // helpers not available here: the job runs on this worker alone
  }
  const waiting = new Map();
  let seq = 0;
  const h = { alive: true, stop() { h.alive = false; worker.terminate(); for (const w of waiting.values()) w.reject({ code: 'stopped' }); waiting.clear(); } };
  job.helpers.push(h);
  const call = (method, args) => new Promise((resolve, reject) => {
    const rid = ++seq;
    waiting.set(rid, { resolve, reject });
    worker.postMessage({ id: rid, method, args });
  });
  worker.onmessage = (e) => {
    const m = e.data || {};
    const w = waiting.get(m.id);
    if (!w || m.progress) return;
    waiting.delete(m.id);
    if (m.ok) w.resolve(m.result);
    else w.reject(m.error);
  };
  worker.onerror = (e) => {
    e.preventDefault();
    for (const w of waiting.values()) w.reject({ code: 'helper_failed' });
    waiting.clear();
  };
  (async () => {
    // Two pieces in flight: the next one waits in the helper's queue while
    // it computes the current one, so the helper never idles while this
    // worker is busy with its own batch and cannot hand out work.
    const inFlight = [];
    let size = 1;
    try {
      await call('init', [wasmModule]);
      await call(parallel.helperStart, [share]);
      let last = performance.now();
      while (h.alive && !job.cancelled) {
        while (inFlight.length < 2) {
          const piece = take(size);
          if (!piece) break;
          inFlight.push({ piece, result: call(parallel.simulate, piece) });
        }
        if (!inFlight.length) break;
        const curves = await inFlight[0].result;
        const { piece } = inFlight.shift();
        // Time between finished pieces: the helper's own computing time.
        const now = performance.now();
        size = adapt(size, piece[1] - piece[0], now - last, HELPER_MS);
        last = now;
        if (!h.alive) break;
        deliver(piece[0], curves);
      }
    } catch (_) {
      // fall through: the pieces in hand go back to the queue
    }
    if (!job.cancelled) for (const { piece } of inFlight) giveBack(piece);
    for (const f of inFlight) f.result.catch(() => {});
    h.alive = false;
    worker.terminate();
  })();
}

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
      wasmModule = args[0];
      if (typeof args[1] === 'string' && typeof Worker === 'function') {
        try {
          helperUrl = URL.createObjectURL(new Blob([args[1]], { type: 'text/javascript' }));
        } catch (_) {
          helperUrl = null;
        }
      }
      const exports = wasm_bindgen.initSync({ module: args[0] });
      memory = exports && exports.memory ? exports.memory : null;
      session = new wasm_bindgen.Session();
      result = { version: wasm_bindgen.version() };
    } else if (!session) {
      throw { code: 'not_ready', message: 'The engine is not ready yet.' };
    } else if (method === 'snapshot') {
      result = snapshot();
    } else if (method === 'cancel') {
      const job = jobs.get(args[0]);
      if (job) {
        job.cancelled = true;
        // A job waiting for confirmation has no tick to notice.
        if (job.waiting) { job.waiting = false; endCancelled(args[0]); }
      }
      result = Boolean(job);
    } else if (method === 'resume') {
      const job = jobs.get(args[0]);
      if (job && job.waiting && job.go) { job.waiting = false; job.go(); }
      result = Boolean(job);
    } else if (method === 'runJob') {
      if (args[0] && args[0].parallel && helperCount() > 0) runParallelJob(id, args[0]);
      else runJob(id, args[0]);
      return; // answers (progress, then result) are posted by the job itself
    } else if (isSessionMethod(method)) {
      // Long single steps report the fraction done (see beginProgress).
      stepId = id;
      wasm_bindgen.beginProgress();
      try {
        result = session[method](...args);
      } finally {
        stepId = null;
      }
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
