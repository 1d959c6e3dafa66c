/* What an analysis panel (www/analyses/*.js) may use of the page; each
 * panel's mount function receives this object. See www/README.md. */

import { $, el, fmt, fmtFixed, fmtMetres, fmtDuration, plural, downloadName } from './dom.js';
import { state } from './state.js';
import { paramSpec } from './param-limits.js';
import { term } from './glossary.js';
import { setStatus, showError, clearError, act } from './status.js';
import { call, runJob } from './engine.js';
import { snapshotListeners } from './results.js';
import { map, renderLegend } from './mapview.js';

// ---------- the API analysis panels use (www/analyses/*.js) ----------
// Each analysis adds a section to the results area, calls the engine through
// `call` / `runJob`, may draw on the map through an overlay, and hears about
// every change of the loaded data through `onSnapshot`.
export const panelApi = {
  call,
  runJob,
  el,
  fmt,
  fmtFixed,
  fmtMetres,
  fmtDuration,
  /** A run estimated to take longer than this (ms) asks first, offering
   * faster settings (the envelope test and the scan). */
  longRunMs: 20000,
  /** Workers a parallel job (runJob with spec.parallel) will use: this
   * one and a helper per further core, at most 8 (as www/worker.js does). */
  jobWorkers() { return Math.max(1, Math.min(Number(navigator.hardwareConcurrency) || 1, 8)); },
  plural,
  downloadName,
  setStatus,
  /** Shows an error; a request the user cancelled is not one. */
  showError(context, err) {
    if (err && err.code === 'cancelled') setStatus('Cancelled.');
    else showError(context, err);
  },
  clearError,
  act,
  /** A trade term with its plain-words explanation behind a "?" (glossary.js). */
  term,
  /** Registers fn(snap) to run after every change of loaded data. */
  onSnapshot(fn) { snapshotListeners.push(fn); if (state.snap) fn(state.snap); },
  /** The last snapshot (study, summary, layers), or null. */
  snapshot() { return state.snap; },
  /** Adds a titled section under the results; returns its body element. */
  addSection(id, title, intro) {
    const body = el('div', { class: 'analysis-body', id: `${id}-body` });
    const section = el('section', { class: 'panel analysis', id, 'aria-labelledby': `${id}-title` },
      el('h2', { id: `${id}-title` }, title), intro ? el('p', { class: 'hint' }, intro) : null, body);
    $('analyses').append(section);
    return body;
  },
  /** Sets (or with null removes) a named map overlay:
   * draw(ctx, {toX, toY, k, dpr, W, H}) in device pixels, and legend
   * entries [{label, colour, kind: 'line'|'fill'|'point'}]. */
  setOverlay(name, draw, legend) {
    map.setOverlay(name, draw, legend);
    renderLegend(state.snap && state.snap.layers);
  },
  /** Shows on the map only the events whose entry in `mask` (a Uint8Array,
   * one per event in the order of the map's events) is non-zero; null shows
   * them all (the time filter of the time line). Returns the events drawn. */
  setEventFilter(mask) {
    map.setEventFilter(mask);
    return map.lastDrawn.events;
  },
  /** The engine running on the page's own thread (for drawing charts). */
  engine() { return wasm_bindgen; },
  /** Sizes a chart canvas to its container (420–960 CSS px wide, height
   * from the width) with as many canvas pixels as screen pixels, so charts
   * stay sharp on high-density screens; returns the pixel ratio, which the
   * engine's drawing functions take as `scale`. */
  sizeChart(canvas) {
    const w = Math.max(420, Math.min(960, Math.floor((canvas.parentElement.clientWidth || 762) - 2)));
    const h = Math.round(Math.min(460, Math.max(300, w * 0.55)));
    const dpr = Math.min(4, Math.max(1, window.devicePixelRatio || 1));
    canvas.width = Math.round(w * dpr);
    canvas.height = Math.round(h * dpr);
    canvas.style.width = `${w}px`;
    canvas.style.height = `${h}px`;
    return dpr;
  },
  /** One option of an analysis as the engine describes it (kind, unit,
   * default, min, max, allowed): the one home of defaults and limits. */
  param(method, name) { return paramSpec(method, name); },
  /** The seed typed in `input` (a whole number, 0 or more), or a new random
   * one when it is empty; throws {message} for anything else. */
  readSeed(input) {
    const text = input.value.trim();
    if (text === '') {
      const a = new Uint32Array(2);
      crypto.getRandomValues(a);
      return a[0] * 2 ** 21 + (a[1] >>> 11);
    }
    const v = Number(text);
    if (!(Number.isInteger(v) && v >= 0 && v <= Number.MAX_SAFE_INTEGER)) throw { message: 'the seed must be a whole number, 0 or more.' };
    return v;
  },
  /** Runs a simulation job for a panel: its progress bar and line, Cancel,
   * status lines and errors, the same in every panel. `panel` holds the
   * panel's `token` and running `job`: a newer run or a change of the
   * loaded data (which moves the token on) makes this run's answers
   * ignored. `ui`: {progress, text (elements), unit ('relabellings'),
   * startText, started, done, cancelled (status lines), failed (error
   * title), running(on), result(res)}. */
  async runPanelJob(panel, spec, ui) {
    const token = ++panel.token;
    ui.running(true);
    ui.progress.max = (spec.params && spec.params.n_sim) || 1;
    ui.progress.value = 0;
    ui.text.textContent = ui.startText;
    setStatus(ui.started);
    const job = runJob(spec, ({ done, total, workers }) => {
      if (token !== panel.token) return;
      ui.progress.max = total;
      ui.progress.value = done;
      ui.text.textContent = `${fmt(done)} / ${fmt(total)} ${ui.unit}${workers > 1 ? ` on ${workers} workers` : ''}`;
    });
    panel.job = job;
    try {
      const res = await job.promise;
      if (token !== panel.token) return;
      ui.text.textContent = `${fmt(res.n_sim)} ${ui.unit} done`;
      ui.result(res);
      setStatus(ui.done);
    } catch (err) {
      if (token !== panel.token) return;
      if (err && err.code === 'cancelled') {
        ui.text.textContent = 'Cancelled.';
        setStatus(ui.cancelled);
      } else {
        ui.text.textContent = '';
        if (!(err && (err.code === 'no_job' || err.code === 'engine_stopped'))) panelApi.showError(ui.failed, err);
      }
    } finally {
      if (token === panel.token) {
        panel.job = null;
        ui.running(false);
      }
    }
  },
};
