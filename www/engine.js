/* The worker client: starts the classic worker from a Blob URL (the glue's
 * text followed by www/worker.js), sends {id, method, args} requests, routes
 * answers and {progress} messages to their promises, runs and cancels long
 * jobs, and shows the progress bar while a request is outstanding.
 * What to do when the engine stops is set from outside (recovery.js), so that
 * this module knows nothing about files or panels. */

import { $ } from './dom.js';
import { state } from './state.js';

const PROGRESS_DELAY_MS = 500;

let stoppedHandler = null;

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
      if (state.pending.size > 0) $('progress').hidden = false;
    }, PROGRESS_DELAY_MS);
  } else if (!busy) {
    clearTimeout(state.progressTimer);
    state.progressTimer = 0;
    $('progress').hidden = true;
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

/** Sends one request to the worker now. */
export function post(method, args, onProgress, onId) {
  return new Promise((resolve, reject) => {
    const id = state.nextId++;
    if (onId) onId(id);
    state.pending.set(id, { resolve, reject, method, onProgress });
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
 * method names). Returns {promise, cancel}; onProgress({done, total}) is
 * called after every batch. A cancelled job rejects with code 'cancelled'. */
export function runJob(spec, onProgress) {
  let jobId = null;
  let cancelled = false;
  const promise = (async () => {
    if (state.engineReady) await state.engineReady;
    return post('runJob', [spec], onProgress, (id) => { jobId = id; if (cancelled) state.worker.postMessage({ id: -1, method: 'cancel', args: [id] }); });
  })();
  const cancel = () => {
    cancelled = true;
    if (jobId !== null && state.worker) state.worker.postMessage({ id: -1, method: 'cancel', args: [jobId] });
  };
  return { promise, cancel };
}

function onWorkerMessage(worker, msg) {
  if (worker !== state.worker || !msg) return;
  const p = state.pending.get(msg.id);
  if (!p) return;
  if (msg.progress) {
    if (p.onProgress) p.onProgress(msg.progress);
    return;
  }
  state.pending.delete(msg.id);
  updateProgress();
  if (msg.ok) p.resolve(msg.result);
  else {
    if (msg.fatal && p.method !== 'init' && !state.restarting) engineStopped(msg.error && msg.error.message);
    p.reject(msg.fatal ? { ...msg.error, code: 'engine_stopped' } : msg.error);
  }
}

export function stopWorker() {
  const old = state.worker;
  state.worker = null;
  if (old) old.terminate();
  for (const [, p] of state.pending) p.reject({ code: 'engine_stopped', message: 'The engine stopped.' });
  state.pending.clear();
  updateProgress();
}
