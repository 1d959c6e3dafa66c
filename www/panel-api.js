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
};
