/* The worker client: starts the classic worker from a Blob URL (the glue's
 * text followed by www/worker.js), sends {id, method, args} requests, routes
 * answers and {progress} messages to their promises, runs and cancels long
 * jobs, and shows the progress bar while a request is outstanding.
 * What to do when the engine stops is set from outside (recovery.js), so that
 * this module knows nothing about files or panels. */

import { $ } from './dom.js';
import { state } from './state.js';

const PROGRESS_DELAY_MS = 500;
/** A job told to stop that has not stopped after this long is stopped by
 * restarting the engine, so Cancel always takes effect within half a second. */
const HARD_CANCEL_MS = 300;

let stoppedHandler = null;
let cancelHandler = null;

/** Sets fn(), called to stop work that cannot be stopped politely: it must
 * end every outstanding request (restart the engine). */
export function onHardCancel(fn) {
  cancelHandler = fn;
}

/** What the user is waiting for, in words, by engine method. */
const WORK_NAMES = {
  loadEvents: 'reading the events', loadControls: 'reading the controls', loadArea: 'reading the study area',
  snapshot: 'summarising', summary: 'summarising', mapLayers: 'preparing the map', runJob: 'running simulations',
  quadratTest: 'testing counts in cells', clarkEvans: 'computing the nearest-neighbour ratio',
  intensitySurface: 'computing the surface', kDistance: 'computing neighbour distances', dbscan: 'looking for clusters',
  maskDonut: 'masking', maskKAnonymity: 'masking', maskingCost: 'measuring what masking changed',
  aggregate: 'counting per area', exportFile: 'writing the file', exportPreview: 'checking the file',
};

function workText() {
  const first = state.pending.values().next().value;
  if (!first) return '';
  const secs = Math.round((performance.now() - first.t0) / 1000);
  const what = WORK_NAMES[first.method] || 'working';
  const f = first.fraction > 0 ? Math.min(1, first.fraction) : 0;
  const pct = f > 0 ? ` ${Math.floor(f * 100)} % done` : '';
  // Time left from the pace so far, once there is a pace to go by.
  let left = '';
  if (f >= 0.02 && f < 1 && secs >= 3) {
    const s = Math.round((secs * (1 - f)) / f);
    left = s >= 90 ? `, about ${Math.round(s / 60)} min left` : `, about ${Math.max(1, s)} s left`;
  }
  return `Working: ${what}…${pct}${secs >= 2 ? ` (${secs} s${left})` : ''}`;
}

/** Shows how far the first outstanding one-step request has got: the bar
 * turns from a moving stripe into a filling one. */
function showFraction() {
  const first = state.pending.values().next().value;
  const bar = $('progress');
  const f = first && first.fraction > 0 ? Math.min(1, first.fraction) : null;
  bar.classList.toggle('known', f !== null);
  bar.firstElementChild.style.width = f !== null ? `${(f * 100).toFixed(1)}%` : '';
  if (!$('busy').hidden) $('busy-text').textContent = workText();
}

let busyTicker = 0;
function showBusy(on) {
  $('busy').hidden = !on;
  clearInterval(busyTicker);
  busyTicker = 0;
  if (on) {
    $('busy-text').textContent = workText();
    busyTicker = setInterval(() => { $('busy-text').textContent = workText(); }, 1000);
  }
}

/** Sets fn(reason), called when the wasm instance traps or the worker dies. */
export function onEngineStopped(fn) {
  stoppedHandler = fn;
}

function engineStopped(reason) {
  if (stoppedHandler) stoppedHandler(reason);
}

function updateProgress() {
  const busy = state.pending.size > 0;
  if (busy && !state.progressTimer && $('progress').hidden) {
    state.progressTimer = setTimeout(() => {
      state.progressTimer = 0;
      if (state.pending.size > 0 && !onlyInit()) {
        $('progress').hidden = false;
        showBusy(true);
      }
    }, PROGRESS_DELAY_MS);
  } else if (!busy) {
    clearTimeout(state.progressTimer);
    state.progressTimer = 0;
    $('progress').hidden = true;
    showBusy(false);
  }
  document.body.dataset.busy = busy ? '1' : '0';
}

export function startWorker() {
  const glue = $('cloister-glue').textContent;
  const body = $('cloister-worker-src').textContent;
  if (state.workerUrl) URL.revokeObjectURL(state.workerUrl);
  state.workerUrl = URL.createObjectURL(new Blob([glue, '\n;\n', body], { type: 'text/javascript' }));
  const worker = new Worker(state.workerUrl);
  worker.onmessage = (e) => onWorkerMessage(worker, e.data);
  worker.onerror = (e) => {
    e.preventDefault();
    if (worker === state.worker) engineStopped(e.message || 'the worker failed');
  };
  worker.onmessageerror = () => {
    if (worker === state.worker) engineStopped('a message could not be read');
  };
  state.worker = worker;
  // The worker's own source goes along so that it can start helper
  // workers for long jobs (a page opened from disk cannot share its
  // Blob URL with a worker).
  return post('init', [state.module, `${glue}\n;\n${body}`]);
}

function onlyInit() {
  for (const p of state.pending.values()) if (p.method !== 'init') return false;
  return true;
}

/** Sends one request to the worker now. */
export function post(method, args, onProgress, onId) {
  return new Promise((resolve, reject) => {
    const id = state.nextId++;
    if (onId) onId(id);
    state.pending.set(id, { resolve, reject, method, onProgress, t0: performance.now() });
    updateProgress();
    try {
      state.worker.postMessage({ id, method, args });
    } catch (err) {
      state.pending.delete(id);
      updateProgress();
      reject({ code: 'engine_stopped', message: String(err && err.message) });
    }
  });
}

/** Sends a request once the engine is up (waits while it is being restarted). */
export async function call(method, ...args) {
  if (state.engineReady) await state.engineReady;
  return post(method, args);
}

/** Runs a long job in the worker ({start, step, finish, params}: Session
 * method names; optional confirm_above_ms, and batchMultiple: batches
 * rounded up to a multiple of it; startProgress: the start step reports
 * {fraction} while it runs; see www/worker.js). Returns {promise, cancel,
 * resume}; onProgress({done, total, ...}) is called after every batch, the
 * first time with start_ms and estimate_ms, and with waiting: true when the
 * job waits for resume() because its estimate is above confirm_above_ms.
 * A cancelled job rejects with code 'cancelled'. */
export function runJob(spec, onProgress) {
  let jobId = null;
  let cancelled = false;
  const promise = (async () => {
    if (state.engineReady) await state.engineReady;
    return post('runJob', [spec], onProgress, (id) => { jobId = id; if (cancelled) state.worker.postMessage({ id: -1, method: 'cancel', args: [id] }); });
  })();
  const cancel = () => {
    cancelled = true;
    if (jobId !== null && state.worker) softCancel(jobId);
  };
  /** Lets a job that waits for confirmation (spec.confirm_above_ms) go on. */
  const resume = () => {
    if (jobId !== null && state.worker) state.worker.postMessage({ id: -1, method: 'resume', args: [jobId] });
  };
  return { promise, cancel, resume };
}

/** Asks the worker to stop job `id` between batches; if it has not stopped
 * HARD_CANCEL_MS later (one step can be long on a large pattern), the engine
 * is restarted. */
function softCancel(id) {
  state.worker.postMessage({ id: -1, method: 'cancel', args: [id] });
  setTimeout(() => { if (state.pending.has(id)) hardCancel(); }, HARD_CANCEL_MS);
}

function hardCancel() {
  if (cancelHandler && !state.restarting) cancelHandler();
}

/** Stops whatever the engine is doing (the Cancel button beside the progress
 * bar): jobs are asked to stop, anything else ends by a restart. */
export function cancelAll() {
  if (state.restarting || state.pending.size === 0 || onlyInit()) return;
  const methods = [...state.pending.values()].map((p) => p.method);
  if (methods.every((m) => m === 'runJob')) {
    for (const [id, p] of state.pending) if (p.method === 'runJob') softCancel(id);
  } else {
    hardCancel();
  }
}

function onWorkerMessage(worker, msg) {
  if (worker !== state.worker || !msg) return;
  const p = state.pending.get(msg.id);
  if (!p) return;
  if (msg.progress) {
    if (p.onProgress) p.onProgress(msg.progress);
    if (typeof msg.progress.fraction === 'number') {
      p.fraction = msg.progress.fraction;
      showFraction();
    }
    return;
  }
  state.pending.delete(msg.id);
  updateProgress();
  showFraction();
  if (msg.ok) p.resolve(msg.result);
  else {
    if (msg.fatal && p.method !== 'init' && !state.restarting) engineStopped(msg.error && msg.error.message);
    p.reject(msg.fatal ? { ...msg.error, code: 'engine_stopped' } : msg.error);
  }
}

/** Ends the worker (and the helper workers it started) at once; every
 * outstanding request is rejected with `error` (default: engine_stopped). */
export function stopWorker(error = { code: 'engine_stopped', message: 'The engine stopped.' }) {
  const old = state.worker;
  state.worker = null;
  if (old) old.terminate();
  for (const [, p] of state.pending) p.reject(error);
  state.pending.clear();
  updateProgress();
}
