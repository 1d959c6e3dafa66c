/* Loading files: the events, the study area and the controls (from a file
 * input, a drop box or the demo), the study-area choice, and reading the kept
 * bytes again when a column role or the kind of coordinates changes. */

import { $, decodeBase64, fmt, plural } from './dom.js';
import { state } from './state.js';
import { setStatus, showError, showAction, clearError } from './status.js';
import { call } from './engine.js';
import { currentOptions, offerColumns, showMapping } from './columns.js';
import { refresh, fileLineText } from './results.js';

export async function readFile(file) {
  return new Uint8Array(await file.arrayBuffer());
}

/** Counts finished load attempts (tests wait on it). */
function loadDone() {
  document.body.dataset.loads = String(Number(document.body.dataset.loads || 0) + 1);
}

/** An events file the user chose (input or drop). While the demo is open it
 * is closed first, so one's own events never mix with the demo's study area
 * and population. */
export async function loadOwnEvents(bytes, name) {
  if (!state.demo) return loadEvents(bytes, name, {});
  try {
    return await loadEventsInner(bytes, name, {}, { afresh: true });
  } finally {
    loadDone();
  }
}

export async function loadEvents(bytes, name, options, opts = {}) {
  try {
    return await loadEventsInner(bytes, name, options, opts);
  } finally {
    loadDone();
  }
}

async function loadEventsInner(bytes, name, options, { refreshAfter = true, fresh = true, afresh = false } = {}) {
  setStatus(`Reading ${name}…`);
  try {
    // afresh: the engine reads the file into an empty session and keeps it
    // only if that worked, so a bad file leaves the demo as it was.
    const report = await call(afresh ? 'loadEventsAfresh' : 'loadEvents', bytes, options);
    if (afresh) forgetPage();
    state.events = { bytes, name, options };
    if (state.pendingFile && state.pendingFile.layer === 'events') state.pendingFile = null;
    if (fresh) state.mapLayer = 'events';
    state.reports.events = report;
    if (state.areaMode !== 'file' && state.areaMode !== 'convex_hull') {
      await call('setAreaFallback', state.areaMode);
    }
    showMapping();
    renderFileLine('events-name', name, report);
    renderRejectedBanner(report);
    if (report.study_error) showError('The events were read, but the study could not be set up', report.study_error);
    if (refreshAfter) await refresh(!fresh);
    setStatus(`${name}: ${fmt(report.accepted)} of ${plural(report.rows_read, 'row', 'rows')} used.`);
    warnIfMostlyOutside(name, report, bytes, options);
    return true;
  } catch (err) {
    // Events that cannot go with the loaded study area (all outside it, or
    // in other coordinates): offer to drop the area.
    if (err && (err.code === 'outside_study_area' || err.code === 'mismatch') && state.area && state.areaMode === 'file') {
      offerToDropArea(bytes, name, options, err);
      return false;
    }
    return pointsNotRead('events', bytes, name, options, err);
  }
}

/** Share of the new events' readable rows outside the loaded study area
 * above which the page says so and offers to drop the area. */
const OUTSIDE_SHARE_WARN = 0.5;

/** New events that (all or mostly) lie outside the loaded study area: say so
 * plainly and offer to drop that area and read the events without it. */
function offerToDropArea(bytes, name, options, err) {
  const area = state.area ? state.area.name : 'the study area';
  showError(`${name} does not fit the study area ${area}`, err);
  showAction('Drop that study area and use these events', async () => {
    clearError();
    try {
      await call('clearArea');
    } catch (e) {
      if (!(e && e.code === 'engine_stopped')) showError('Could not remove the study area', e);
      return;
    }
    state.area = null;
    state.areaMode = 'convex_hull';
    state.reports.area = null;
    $('area-file').value = '';
    renderAreaMode();
    await loadEvents(bytes, name, options);
  });
  if (err && err.code) setStatus(state.events ? `Kept the previous events: ${state.events.name}.` : 'No events loaded.');
}

/** After a successful load: most events outside the loaded area. */
function warnIfMostlyOutside(name, report, bytes, options) {
  if (!(state.area && state.areaMode === 'file' && report)) return;
  const out = (report.by_reason || []).find((r) => r.reason === 'outside_study_area');
  const readable = Number(report.accepted) + (out ? Number(out.count) : 0);
  if (!out || readable === 0 || out.count / readable <= OUTSIDE_SHARE_WARN) return;
  offerToDropArea(bytes, name, options, {
    message: `${fmt(out.count)} of its ${fmt(readable)} readable events lie outside ${state.area.name} and were left out. ` +
      'If the study area belongs to other data, drop it; until then the events inside it are in use.',
  });
  setStatus(`${name}: ${fmt(report.accepted)} of ${plural(report.rows_read, 'row', 'rows')} used; most lie outside the study area.`);
}

/** After a file of points (layer 'events' or 'controls') could not be read:
 * the error, the column editor when the coordinates were not found, and a
 * status line saying what is still loaded. Returns false. */
function pointsNotRead(layer, bytes, name, options, err) {
  if (err && err.code === 'engine_stopped') return false;
  // Coordinate columns not found: the column editor opens with the file's
  // column names (a question, not a red error).
  const asked = offerColumns(layer, bytes, name, options, err);
  if (asked) clearError();
  else showError(`Could not read ${name}`, err);
  const kept = state[layer] ? `Kept the previous ${layer}: ${state[layer].name}.` : `No ${layer} loaded.`;
  const waiting = state.pendingFile && state.pendingFile.layer === layer;
  const why = asked && err && err.message ? ` (${err.message})` : '';
  setStatus(waiting ? `Choose the coordinate columns of ${name} below${why}. ${kept}` : kept);
  return false;
}

/** A warning when many rows of the events could not be used (the share and
 * its threshold come from the engine's load report). */
function renderRejectedBanner(report) {
  const b = $('rejected-banner');
  b.hidden = !(report && report.many_rejected);
  b.textContent = report && report.many_rejected ? report.many_rejected_text : '';
}

export async function loadArea(bytes, name, { refreshAfter = true } = {}) {
  setStatus(`Reading ${name}…`);
  try {
    const report = await call('loadArea', bytes, sharedCoords());
    state.area = { bytes, name };
    state.areaMode = 'file';
    state.reports.area = report;
    $('area-name').textContent = `${name}: loaded`;
    if (report && report.study_error) showError('The boundary was read, but the study could not be set up', report.study_error);
    renderAreaMode();
    if (refreshAfter) await refresh(false);
    setStatus(`Study area read from ${name}.`);
    return true;
  } catch (err) {
    if (err && err.code === 'engine_stopped') return false;
    if (err && (err.code === 'no_valid_rows' || err.code === 'outside_study_area')) {
      showError(`Could not use ${name} as the study area`, {
        message: 'none of the events lies inside it. Check that the boundary and the events describe the same place in the same coordinates.',
      });
    } else {
      showError(`Could not read ${name}`, err);
    }
    renderAreaMode();
    setStatus('Kept the previous study area.');
    return false;
  }
}

/** Read options for the controls: their own column choices, the events' planar unit. */
export function controlsOptions(base) {
  const o = { ...(base || {}) };
  delete o.coords;
  return { ...o, ...sharedCoords() };
}

export async function loadControls(bytes, name, { refreshAfter = true, options = null } = {}) {
  setStatus(`Reading ${name}…`);
  const opts = controlsOptions(options);
  try {
    const report = await call('loadControls', bytes, opts);
    state.controls = { bytes, name, options: opts };
    if (state.pendingFile && state.pendingFile.layer === 'controls') state.pendingFile = null;
    state.reports.controls = report;
    renderFileLine('controls-name', name, report);
    $('show-controls').disabled = false;
    $('controls-clear').disabled = false;
    showMapping();
    if (report.study_error) showError('The controls were read, but the study could not be set up', report.study_error);
    if (refreshAfter) await refresh(true);
    setStatus(`${name}: ${fmt(report.accepted)} of ${plural(report.rows_read, 'row', 'rows')} used as controls.`);
    return true;
  } catch (err) {
    return pointsNotRead('controls', bytes, name, opts, err);
  }
}

export async function clearControls() {
  clearError();
  try {
    await call('clearControls');
    state.controls = null;
    state.reports.controls = null;
    if (state.pendingFile && state.pendingFile.layer === 'controls') state.pendingFile = null;
    state.mapLayer = 'events';
    showMapping();
    $('controls-name').textContent = '';
    $('controls-clear').disabled = true;
    $('controls-file').value = '';
    await refresh(true);
    setStatus('Controls removed.');
  } catch (err) {
    showError('Could not remove the controls', err);
  }
}

export async function setAreaMode(mode) {
  clearError();
  if (mode === 'file') {
    if (!state.area) {
      setStatus('Choose a boundary file first.');
      renderAreaMode();
      $('area-file').focus();
      return;
    }
    await loadArea(state.area.bytes, state.area.name);
    return;
  }
  try {
    if (state.areaMode === 'file') await call('clearArea');
    state.areaMode = mode;
    if (state.events) await call('setAreaFallback', mode);
    renderAreaMode();
    await refresh(false);
    setStatus(mode === 'convex_hull' ? 'Study area: a hull drawn around the events.' : 'Study area: a rectangle around the events.');
  } catch (err) {
    showError('Could not change the study area', err);
    renderAreaMode();
  }
}

function demoBytes(id) {
  const node = $(id);
  if (!node) return null;
  return decodeBase64(node.textContent);
}

export async function loadDemo({ counts = false } = {}) {
  clearError();
  const cases = demoBytes('demo-cases');
  const area = demoBytes('demo-area');
  // The demo population as one point per person, or as counts of residents
  // at block centroids (population-blocks.csv).
  const popFile = counts ? 'population-blocks.csv' : 'population.csv';
  const pop = demoBytes(counts ? 'demo-population-blocks' : 'demo-population');
  if (!cases) {
    showError('The demo is missing', { message: 'this copy of the page was built without demo data.' });
    return;
  }
  setStatus('Loading the demo…');
  // The demo replaces the whole session: the user's own files (and their
  // study area) must not mix with it.
  if (!(await forgetAll())) return;
  state.demo = true;
  // Stop at the first failure: its message stays on screen.
  if (area && !(await loadArea(area, 'town-boundary.geojson (demo)', { refreshAfter: false }))) return;
  if (!(await loadEvents(cases, 'cases.csv (demo)', {}, { refreshAfter: false }))) return;
  if (pop && !(await loadControls(pop, `${popFile} (demo)`, { refreshAfter: false }))) return;
  await refresh(false);
  setStatus(`Demo loaded: ${statusCounts()}.`);
}

/** Empties the engine's session and the page's record of loaded files, so
 * what is loaded next starts from nothing. Returns false if the engine
 * could not be reached (the error is shown). */
export async function forgetAll() {
  try {
    await call('clearAll');
  } catch (err) {
    if (!(err && err.code === 'engine_stopped')) showError('Could not start afresh', err);
    return false;
  }
  forgetPage();
  return true;
}

/** The page's side of forgetting everything (the engine's is clearAll). */
function forgetPage() {
  state.events = null;
  state.area = null;
  state.controls = null;
  state.pendingFile = null;
  state.reports = { events: null, controls: null, area: null };
  state.areaMode = 'convex_hull';
  state.mapLayer = 'events';
  state.demo = false;
  for (const id of ['events-name', 'controls-name', 'area-name']) $(id).textContent = '';
  for (const id of ['events-file', 'controls-file', 'area-file']) $(id).value = '';
  $('show-controls').disabled = true;
  $('controls-clear').disabled = true;
  showMapping();
  renderAreaMode();
}

export async function loadProblems() {
  clearError();
  const bytes = demoBytes('demo-problems');
  const area = demoBytes('demo-area');
  if (!bytes) return;
  // Like the demo, it replaces whatever was loaded.
  if (!(await forgetAll())) return;
  state.demo = true;
  if (area && !(await loadArea(area, 'town-boundary.geojson (demo)', { refreshAfter: false }))) return;
  if (!(await loadEvents(bytes, 'cases-with-problems.csv (demo)', {}, { refreshAfter: false }))) return;
  await refresh(false);
  setStatus(`Loaded a file with problems: ${statusCounts()}. See "Rows not used" under Data quality.`);
}

function statusCounts() {
  const r = state.reports.events;
  if (!r) return 'no events';
  const study = state.snap && state.snap.study;
  const used = study ? study.events : r.accepted;
  return `${fmt(used)} events used of ${plural(r.rows_read, 'row', 'rows')}`;
}

/** Options that make the study area and controls use the events' planar
 * unit (all files must share one kind of coordinates; a planar unit cannot
 * be told from the numbers). Lon/lat is detected, so nothing is forced. */
export function sharedCoords() {
  const r = state.reports.events;
  const c = r && r.coords;
  return c && c.kind === 'planar' ? { coords: { kind: 'planar', unit: c.unit } } : {};
}

function sameCoords(a, b) {
  return !!a && !!b && a.kind === b.kind && (a.kind !== 'planar' || a.unit === b.unit);
}

export async function mappingChanged() {
  clearError();
  const layer = state.mapLayer;
  const pending = state.pendingFile && state.pendingFile.layer === layer ? state.pendingFile : null;
  if (layer === 'controls') {
    const target = pending || state.controls;
    if (!target) return;
    await loadControls(target.bytes, target.name, { options: currentOptions() });
    return;
  }
  const target = pending || state.events;
  if (!target) return;
  const options = currentOptions();
  const before = state.reports.events && state.reports.events.coords;
  const hadArea = state.area && state.areaMode === 'file' ? state.area : null;
  const hadControls = state.controls;
  if (target !== state.events || sameCoords(before, options.coords) || (!hadArea && !hadControls)) {
    await loadEvents(target.bytes, target.name, options, { fresh: target !== state.events });
    return;
  }
  // New coordinates for the events: the study area and controls follow them,
  // so take them out, read the events, then read them again in the new unit.
  try {
    if (hadArea) await call('clearArea');
    if (hadControls) await call('clearControls');
  } catch (err) {
    if (!(err && err.code === 'engine_stopped')) showError('Could not change the coordinates', err);
    return;
  }
  const ok = await loadEvents(target.bytes, target.name, options, { refreshAfter: false, fresh: false });
  const failures = [];
  const keepError = () => { if (!$('error-banner').hidden) failures.push($('error-text').textContent); };
  keepError();
  if (hadArea && !(await loadArea(hadArea.bytes, hadArea.name, { refreshAfter: false }))) {
    keepError();
    state.areaMode = 'convex_hull';
    renderAreaMode();
  }
  if (hadControls && !(await loadControls(hadControls.bytes, hadControls.name, { refreshAfter: false, options: hadControls.options }))) {
    keepError();
    state.controls = null;
    state.reports.controls = null;
    $('controls-name').textContent = '';
    $('controls-clear').disabled = true;
  }
  await refresh(ok);
  if (failures.length > 0) showError('Changing the coordinates', { message: failures.join(' — ') });
}

function renderFileLine(id, name, report) {
  $(id).textContent = fileLineText(name, report, report ? report.accepted : NaN, report ? report.rows_read : 0);
}

export function renderAreaMode() {
  const mode = state.areaMode;
  $('area-mode-file').checked = mode === 'file';
  $('area-mode-hull').checked = mode === 'convex_hull';
  $('area-mode-box').checked = mode === 'bounding_box';
  $('area-mode-file').disabled = !state.area;
  $('area-warning').hidden = mode === 'file';
  if (!state.area) $('area-name').textContent = '';
  else if (mode !== 'file') $('area-name').textContent = `${state.area.name} (not in use)`;
}
