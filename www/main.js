/* Cloister page logic: user interface only. Every number shown is computed by
 * the engine in the worker; this file reads files, sends requests, and shows
 * answers. Nothing is sent anywhere and nothing is stored. */
'use strict';

(function () {
  const $ = (id) => document.getElementById(id);
  const PAGE_SIZE = 50;
  const PROGRESS_DELAY_MS = 500;
  const ROLES = ['x', 'y', 'time', 'category', 'weight'];

  const state = {
    module: null,
    worker: null,
    workerUrl: null,
    nextId: 1,
    pending: new Map(),
    progressTimer: 0,
    restarting: false,
    engineReady: null, // a promise while the engine restarts
    // Kept file bytes, so options can change and a crashed engine can be refilled.
    events: null, // {bytes, name, options}
    pendingFile: null, // a file whose coordinate columns the user must choose: {layer, bytes, name, options}
    mapLayer: 'events', // which file the column editor shows
    area: null, // {bytes, name}
    areaMode: 'convex_hull',
    controls: null, // {bytes, name}
    reports: { events: null, controls: null, area: null },
    snap: null,
    rej: { layer: 'events', offset: 0, total: 0 },
  };

  let map = null;
  const snapshotListeners = [];

  // ---------- small helpers ----------

  function decodeBase64(text) {
    const clean = text.replace(/\s+/g, '');
    if (typeof Uint8Array.fromBase64 === 'function') return Uint8Array.fromBase64(clean);
    const bin = atob(clean);
    const out = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
    return out;
  }

  function el(tag, attrs, ...children) {
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

  function num(v) {
    if (typeof v === 'bigint') return Number(v);
    return typeof v === 'number' ? v : v === null || v === undefined ? NaN : Number(v);
  }

  /** A number for people: grouped thousands, `digits` significant figures for non-integers. */
  function fmt(v, digits = 4) {
    const x = num(v);
    if (!Number.isFinite(x)) return '—';
    if (Number.isInteger(x) && Math.abs(x) < 1e15) return x.toLocaleString('en-GB');
    const a = Math.abs(x);
    if (a !== 0 && (a < 1e-3 || a >= 1e9)) return x.toExponential(digits - 1);
    const decimals = Math.max(0, digits - 1 - Math.floor(Math.log10(a || 1)));
    return x.toLocaleString('en-GB', { maximumFractionDigits: Math.min(decimals, 8), minimumFractionDigits: 0 });
  }

  function fmtFixed(v, decimals) {
    const x = num(v);
    return Number.isFinite(x) ? x.toFixed(decimals) : '—';
  }

  function fmtMetres(v) {
    const x = num(v);
    if (!Number.isFinite(x)) return '—';
    if (Math.abs(x) >= 10000) return `${fmt(x / 1000, 4)}\u00a0km`;
    return `${fmt(x, 4)}\u00a0m`;
  }

  function fmtDays(days) {
    const x = num(days);
    if (!Number.isFinite(x)) return '—';
    if (x < 2) return `${fmt(x * 24, 3)}\u00a0hours`;
    return `${fmt(x, 4)}\u00a0days`;
  }

  /** Days since 1970-01-01 (UTC) to a date (and clock time if it has one). */
  function fmtTime(days, withClock) {
    const x = num(days);
    if (!Number.isFinite(x)) return String(days);
    const d = new Date(Math.round(x * 86400000));
    const iso = d.toISOString();
    return withClock ? `${iso.slice(0, 10)} ${iso.slice(11, 16)}` : iso.slice(0, 10);
  }

  function plural(n, one, many) {
    return `${fmt(n)} ${num(n) === 1 ? one : many}`;
  }

  function errorText(err) {
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

  // ---------- status, progress, errors ----------

  function setStatus(text) {
    $('status').textContent = text;
  }

  function showError(context, err) {
    let text = `${context}: ${errorText(err)}`;
    if (err && Array.isArray(err.by_reason) && err.by_reason.length > 0) {
      const parts = err.by_reason.map((r) => `${r.reason_text || r.reason} (${fmt(r.count)})`);
      text += ` Reasons: ${parts.join('; ')}.`;
    }
    $('error-text').textContent = text;
    // A file that read but could not be used: show its first rejected rows.
    const list = $('error-rows');
    list.replaceChildren();
    const rows = err && Array.isArray(err.rejections) ? err.rejections : [];
    for (const r of rows.slice(0, 5)) {
      const where = r.column ? `row ${fmt(r.row)}, column "${r.column}"` : `row ${fmt(r.row)}`;
      const value = r.value === '' || r.value === null || r.value === undefined ? 'empty' : `"${r.value}"`;
      list.append(el('li', null, `${where}: ${r.reason_text || r.reason} (${value})`));
    }
    if (rows.length > 5) list.append(el('li', null, `…and ${fmt(rows.length - 5)} more`));
    list.hidden = rows.length === 0;
    $('error-banner').hidden = false;
  }

  function clearError() {
    $('error-banner').hidden = true;
    $('error-text').textContent = '';
    $('error-rows').replaceChildren();
    $('error-rows').hidden = true;
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

  // ---------- the worker ----------

  function startWorker() {
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
  function post(method, args, onProgress, onId) {
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
  async function call(method, ...args) {
    if (state.engineReady) await state.engineReady;
    return post(method, args);
  }

  /** Runs a long job in the worker ({start, step, finish, params}: Session
   * method names). Returns {promise, cancel}; onProgress({done, total}) is
   * called after every batch. A cancelled job rejects with code 'cancelled'. */
  function runJob(spec, onProgress) {
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

  function stopWorker() {
    const old = state.worker;
    state.worker = null;
    if (old) old.terminate();
    for (const [, p] of state.pending) p.reject({ code: 'engine_stopped', message: 'The engine stopped.' });
    state.pending.clear();
    updateProgress();
  }

  /** The wasm instance trapped or the worker died: start a fresh one and
   * read the kept files into it again. Requests made meanwhile wait. */
  function engineStopped(reason) {
    if (state.restarting) return;
    state.restarting = true;
    stopWorker();
    const why = reason ? ` (Technical detail: ${reason}.)` : '';
    setStatus('The engine stopped unexpectedly; restarting it…');
    let rebuilt = true;
    state.engineReady = (async () => {
      try {
        await startWorker();
        await replayKeptFiles();
      } catch (_) {
        // The kept files themselves stop the engine: start clean without them.
        rebuilt = false;
        stopWorker();
        state.events = null;
        state.area = null;
        state.controls = null;
        state.pendingFile = null;
        state.reports = { events: null, controls: null, area: null };
        if (state.areaMode === 'file') state.areaMode = 'convex_hull';
        await startWorker();
      }
    })();
    state.engineReady
      .then(async () => {
        state.restarting = false;
        state.engineReady = null;
        showMapping();
        renderAreaMode();
        for (const id of ['events-name', 'controls-name']) if (!state[id.split('-')[0]]) $(id).textContent = '';
        await refresh(true);
        const hadFiles = !!(state.events || state.area || state.controls);
        if (rebuilt && !hadFiles) {
          showError('The engine stopped unexpectedly and was restarted', { message: `the last request could not be completed.${why}` });
          setStatus('Engine restarted.');
        } else if (rebuilt) {
          showError('The engine stopped unexpectedly and was restarted', {
            message: `your files were read into it again (they never left this computer).${why}`,
          });
          setStatus('Engine restarted; your files were read again.');
        } else {
          showError('The engine stopped unexpectedly and was restarted empty', {
            message: `reading your files again stopped it too, so they were set aside; load them again or try other files.${why}`,
          });
          setStatus('Engine restarted with nothing loaded.');
        }
      })
      .catch((err) => {
        state.restarting = false;
        showError('The engine stopped and could not be restarted; reload the page', err);
        setStatus('Engine not available.');
      });
  }

  async function replayKeptFiles() {
    if (state.area && state.areaMode === 'file') {
      state.reports.area = await post('loadArea', [state.area.bytes, sharedCoords()]);
    }
    if (state.events) {
      state.reports.events = await post('loadEvents', [state.events.bytes, state.events.options]);
      if (state.areaMode !== 'file' && state.areaMode !== 'convex_hull') await post('setAreaFallback', [state.areaMode]);
    }
    if (state.controls) {
      state.reports.controls = await post('loadControls', [state.controls.bytes, controlsOptions(state.controls.options)]);
    }
  }

  // ---------- loading ----------

  async function readFile(file) {
    return new Uint8Array(await file.arrayBuffer());
  }

  /** Counts finished load attempts (tests wait on it). */
  function loadDone() {
    document.body.dataset.loads = String(Number(document.body.dataset.loads || 0) + 1);
  }

  async function loadEvents(bytes, name, options, opts = {}) {
    try {
      return await loadEventsInner(bytes, name, options, opts);
    } finally {
      loadDone();
    }
  }

  async function loadEventsInner(bytes, name, options, { refreshAfter = true, fresh = true } = {}) {
    setStatus(`Reading ${name}…`);
    try {
      const report = await call('loadEvents', bytes, options);
      state.events = { bytes, name, options };
      if (state.pendingFile && state.pendingFile.layer === 'events') state.pendingFile = null;
      if (fresh) state.mapLayer = 'events';
      state.reports.events = report;
      if (state.areaMode !== 'file' && state.areaMode !== 'convex_hull') {
        await call('setAreaFallback', state.areaMode);
      }
      showMapping();
      renderFileLine('events-name', name, report);
      if (report.study_error) showError('The events were read, but the study could not be set up', report.study_error);
      if (refreshAfter) await refresh(!fresh);
      setStatus(`${name}: ${fmt(report.accepted)} of ${plural(report.rows_read, 'row', 'rows')} used.`);
      return true;
    } catch (err) {
      if (err && err.code === 'engine_stopped') return false;
      showError(`Could not read ${name}`, err);
      offerColumns('events', bytes, name, options, err);
      const kept = state.events ? `Kept the previous events: ${state.events.name}.` : 'No events loaded.';
      setStatus(state.pendingFile ? `Choose the coordinate columns of ${name}. ${kept}` : kept);
      return false;
    }
  }

  async function loadArea(bytes, name, { refreshAfter = true } = {}) {
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
      if (err && err.code === 'no_valid_rows') {
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
  function controlsOptions(base) {
    const o = { ...(base || {}) };
    delete o.coords;
    return { ...o, ...sharedCoords() };
  }

  async function loadControls(bytes, name, { refreshAfter = true, options = null } = {}) {
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
      if (err && err.code === 'engine_stopped') return false;
      showError(`Could not read ${name}`, err);
      offerColumns('controls', bytes, name, opts, err);
      const kept = state.controls ? `Kept the previous controls: ${state.controls.name}.` : 'No controls loaded.';
      setStatus(state.pendingFile && state.pendingFile.layer === 'controls' ? `Choose the coordinate columns of ${name}. ${kept}` : kept);
      return false;
    }
  }

  async function clearControls() {
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

  async function setAreaMode(mode) {
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

  async function loadDemo() {
    clearError();
    const cases = demoBytes('demo-cases');
    const area = demoBytes('demo-area');
    const pop = demoBytes('demo-population');
    if (!cases) {
      showError('The demo is missing', { message: 'this copy of the page was built without demo data.' });
      return;
    }
    setStatus('Loading the demo…');
    // Stop at the first failure: its message stays on screen.
    if (area && !(await loadArea(area, 'town-boundary.geojson (demo)', { refreshAfter: false }))) return;
    if (!(await loadEvents(cases, 'cases.csv (demo)', {}, { refreshAfter: false }))) return;
    if (pop && !(await loadControls(pop, 'population.csv (demo)', { refreshAfter: false }))) return;
    await refresh(false);
    setStatus(`Demo loaded: ${statusCounts()}.`);
  }

  async function loadProblems() {
    clearError();
    const bytes = demoBytes('demo-problems');
    const area = demoBytes('demo-area');
    if (!bytes) return;
    if (area && !(state.area && state.area.name === 'town-boundary.geojson (demo)' && state.areaMode === 'file')) {
      if (!(await loadArea(area, 'town-boundary.geojson (demo)', { refreshAfter: false }))) return;
    }
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

  // ---------- mapping editor ----------

  function currentOptions() {
    const mapping = {};
    for (const role of ROLES) {
      const sel = $(`map-${role}`);
      if (!sel.disabled) mapping[role] = sel.value === '' ? '' : sel.value;
    }
    const kind = $('map-coords').value;
    const coords = kind === 'lon_lat' ? { kind: 'lon_lat' } : { kind: 'planar', unit: kind };
    return { mapping, coords, date_order: $('map-date').value };
  }

  function renderMapping(report, pending = false) {
    const fs = $('mapping');
    if (!report) {
      fs.disabled = true;
      fs.hidden = true;
      return;
    }
    fs.disabled = false;
    fs.hidden = false;
    const isGeo = report.format && report.format.format === 'geo_json';
    const columns = Array.from(report.columns || []);
    for (const role of ROLES) {
      const sel = $(`map-${role}`);
      sel.replaceChildren();
      const chosen = report.mapping ? report.mapping[role] : null;
      if ((role === 'x' || role === 'y') && isGeo) {
        sel.append(el('option', { value: '' }, 'from the geometry'));
        sel.disabled = true;
        continue;
      }
      sel.disabled = false;
      sel.append(el('option', { value: '' }, role === 'x' || role === 'y' ? '(choose a column)' : '(not used)'));
      for (const c of columns) sel.append(el('option', { value: c }, c));
      sel.value = chosen && columns.includes(chosen) ? chosen : '';
    }
    const coords = report.coords || {};
    $('map-coords').value = coords.kind === 'planar' ? coords.unit || 'metre' : 'lon_lat';
    const kept = state.mapLayer === 'controls' ? state.controls : state.events;
    const opts = pending && state.pendingFile ? state.pendingFile.options : kept ? kept.options : {};
    $('map-date').value = (opts && opts.date_order) || 'day_month_year';
    // The controls always use the events' kind of coordinates.
    $('map-coords').disabled = state.mapLayer === 'controls';
    if (pending) return;
    const fmtInfo = report.format || {};
    let how = 'GeoJSON points';
    if (fmtInfo.format === 'csv') {
      const d = fmtInfo.delimiter === '\t' ? 'tab' : fmtInfo.delimiter === ';' ? 'semicolon' : fmtInfo.delimiter === ',' ? 'comma' : `"${fmtInfo.delimiter}"`;
      how = `Table separated by ${d}${fmtInfo.decimal_comma ? ', decimal comma' : ''}`;
    }
    $('mapping-hint').textContent = `${how}. Change a choice to read the file again.`;
  }

  /** Options that make the study area and controls use the events' planar
   * unit (all files must share one kind of coordinates; a planar unit cannot
   * be told from the numbers). Lon/lat is detected, so nothing is forced. */
  function sharedCoords() {
    const r = state.reports.events;
    const c = r && r.coords;
    return c && c.kind === 'planar' ? { coords: { kind: 'planar', unit: c.unit } } : {};
  }

  function sameCoords(a, b) {
    return !!a && !!b && a.kind === b.kind && (a.kind !== 'planar' || a.unit === b.unit);
  }

  async function mappingChanged() {
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

  /** Column names from the first line of a delimited file, to offer in the
   * mapping editor when the engine could not find the coordinate columns. */
  function headerColumns(bytes) {
    const head = new TextDecoder('utf-8', { fatal: false }).decode(bytes.subarray(0, 65536)).replace(/^\uFEFF/, '');
    if (/^\s*[[{]/.test(head)) return [];
    const line = head.split(/\r?\n/, 1)[0] || '';
    let best = ',';
    let most = -1;
    for (const d of [',', ';', '\t']) {
      const n = line.split(d).length - 1;
      if (n > most) { most = n; best = d; }
    }
    if (most < 1) return [];
    return line.split(best).map((c) => c.trim().replace(/^"(.*)"$/, '$1').trim()).filter((c) => c.length > 0);
  }

  function renderPendingMapping(columns, name, options) {
    const mapping = (options && options.mapping) || {};
    renderMapping({ columns, mapping, coords: options && options.coords, format: null }, true);
    const what = state.pendingFile && state.pendingFile.layer === 'controls' ? 'controls' : 'events';
    $('mapping-hint').textContent = `${name}: choose the x and y columns below to read it. Until then the map shows the previous ${what}.`;
  }

  /** After a failed read: if the coordinate columns were not found in a table,
   * keep the bytes and let the user choose the columns in the editor. */
  function offerColumns(layer, bytes, name, options, err) {
    const wasPending = state.pendingFile && state.pendingFile.layer === layer && state.pendingFile.bytes === bytes;
    const columns = err && (err.code === 'missing_columns' || wasPending) ? headerColumns(bytes) : [];
    if (columns.length > 1) {
      state.pendingFile = { layer, bytes, name, options };
      state.mapLayer = layer;
    } else if (wasPending) {
      state.pendingFile = null;
    }
    showMapping();
  }

  /** Shows the column editor for the file chosen in it (events or controls). */
  function showMapping() {
    const hasControls = !!state.controls || (state.pendingFile && state.pendingFile.layer === 'controls');
    const hasEvents = !!state.events || (state.pendingFile && state.pendingFile.layer === 'events');
    if (state.mapLayer === 'controls' && !hasControls) state.mapLayer = 'events';
    for (const node of document.querySelectorAll('.layer-choice')) node.hidden = !(hasControls && hasEvents);
    $('map-layer').value = state.mapLayer;
    const p = state.pendingFile;
    if (p && p.layer === state.mapLayer) {
      const columns = headerColumns(p.bytes);
      renderPendingMapping(columns, p.name, p.options);
    } else {
      renderMapping(state.reports[state.mapLayer]);
    }
  }

  function renderFileLine(id, name, report) {
    const rows = report ? `: ${fmt(report.accepted)} of ${plural(report.rows_read, 'row', 'rows')} used` : '';
    $(id).textContent = `${name}${rows}`;
  }

  function renderAreaMode() {
    const mode = state.areaMode;
    $('area-mode-file').checked = mode === 'file';
    $('area-mode-hull').checked = mode === 'convex_hull';
    $('area-mode-box').checked = mode === 'bounding_box';
    $('area-mode-file').disabled = !state.area;
    $('area-warning').hidden = mode === 'file';
    if (!state.area) $('area-name').textContent = '';
    else if (mode !== 'file') $('area-name').textContent = `${state.area.name} (not in use)`;
  }

  // ---------- results ----------

  async function refresh(keepView) {
    let snap;
    try {
      snap = await call('snapshot');
    } catch (err) {
      if (err && err.code === 'engine_stopped') return;
      showError('Could not update the results', err);
      return;
    }
    state.snap = snap;
    const layers = snap.layers;
    if (layers && layers.events && layers.events.length > 0) {
      map.setLayers(layers, keepView);
      $('map-empty').hidden = true;
    } else {
      map.clear();
      $('map-empty').hidden = false;
    }
    renderFileLines(snap.study);
    for (const fn of snapshotListeners) {
      try { fn(snap); } catch (err) { showError('Could not update an analysis panel', err); }
    }
    renderLegend(layers);
    renderSummary(snap);
    renderQuality(snap);
    state.rej.offset = 0;
    if (state.rej.layer === 'controls' && !state.controls) state.rej.layer = 'events';
    await loadRejections();
  }

  /** The line under each file input: file name and how many rows are in use now. */
  function renderFileLines(study) {
    const line = (id, kept, report, used, read) => {
      if (!kept) return;
      const u = study && used !== null && used !== undefined ? used : report && report.accepted;
      const r = study && read !== null && read !== undefined ? read : report && report.rows_read;
      $(id).textContent = Number.isFinite(num(u)) ? `${kept.name}: ${fmt(u)} of ${plural(r, 'row', 'rows')} used` : kept.name;
    };
    line('events-name', state.events, state.reports.events, study && study.events, study && study.events_rows_read);
    line('controls-name', state.controls, state.reports.controls, study && study.controls, study && study.controls_rows_read);
    if (state.area) {
      if (state.areaMode !== 'file') $('area-name').textContent = `${state.area.name} (not in use)`;
      else if (study && Number.isFinite(num(study.area_km2))) $('area-name').textContent = `${state.area.name}: ${fmt(study.area_km2)}\u00a0km²`;
      else $('area-name').textContent = `${state.area.name}: loaded`;
    }
  }

  function renderLegend(layers) {
    const ul = $('legend');
    ul.replaceChildren();
    if (!layers || !layers.events || layers.events.length === 0) return;
    // An overlay that hides the original layers (the sharing view) lists
    // only what is drawn.
    const overlay = map.overlayLegend();
    const baseHidden = overlay.some((item) => item.hidesBase);
    const names = baseHidden ? [] : Array.from(layers.category_names || []);
    const counts = new Map();
    const summaryCats = state.snap && state.snap.summary && state.snap.summary.categories;
    if (Array.isArray(summaryCats)) for (const c of summaryCats) counts.set(c.name, c.count);
    if (layers.event_category && names.length > 0) {
      const pal = CLOISTER_PALETTE.categories;
      names.forEach((name, i) => {
        if (names.length > pal.length && i >= pal.length - 1) return;
        const n = counts.has(name) ? ` (${fmt(counts.get(name))})` : '';
        ul.append(el('li', null, swatch('dot', PointMap.categoryColour(i, names.length)), `${name}${n}`));
      });
      if (names.length > pal.length) {
        ul.append(el('li', null, swatch('dot', CLOISTER_PALETTE.other), `${names.length - pal.length + 1} more categories`));
      }
    } else if (!baseHidden) {
      ul.append(el('li', null, swatch('dot', CLOISTER_PALETTE.single), 'Events'));
    }
    if (!baseHidden && layers.controls && layers.controls.length > 0 && map.showControls) {
      ul.append(el('li', null, swatch('control', CLOISTER_PALETTE.control), 'Controls (population at risk)'));
    }
    const origin = state.snap && state.snap.study && state.snap.study.area_origin;
    if (Array.isArray(layers.area) && layers.area.length > 0 && (!baseHidden || origin === 'file')) {
      const label = origin === 'convex_hull' ? 'Study area (hull around the events)' : origin === 'bounding_box' ? 'Study area (rectangle around the events)' : 'Study area';
      ul.append(el('li', null, swatch('area'), label));
    }
    if (!baseHidden && layers.mean_centre) ul.append(el('li', null, swatch('centre'), 'Mean centre'));
    if (!baseHidden && Array.isArray(layers.ellipse) && layers.ellipse.length > 2) ul.append(el('li', null, swatch('ellipse'), 'Standard deviational ellipse'));
    for (const item of overlay) {
      const sw = el('span', { class: `sw overlay-${item.kind || 'fill'}`, 'aria-hidden': 'true' });
      sw.style.setProperty('--sw', item.colour || '#333');
      ul.append(el('li', null, sw, item.label));
    }
  }

  function swatch(kind, colour) {
    const s = el('span', { class: `sw ${kind}`, 'aria-hidden': 'true' });
    if (colour) s.style.background = colour;
    return s;
  }

  /** Text lines for one summary entry. */
  function lines(...texts) {
    const frag = document.createDocumentFragment();
    texts.forEach((t, i) => {
      if (i > 0) frag.append(el('br'));
      frag.append(t);
    });
    return frag;
  }

  function renderSummary(snap) {
    const dl = $('summary');
    dl.replaceChildren();
    const s = snap && snap.summary;
    const study = snap && snap.study;
    const add = (term, value, key) => {
      const dd = el('dd', key ? { 'data-key': key } : null, value);
      dl.append(el('dt', null, term), dd);
    };
    const catTable = $('categories');
    const catBody = catTable.querySelector('tbody');
    catBody.replaceChildren();
    catTable.hidden = true;
    $('categories-title').hidden = true;
    if (!s) {
      add('Events', snap && snap.summary_error ? errorText(snap.summary_error) : 'none loaded');
      return;
    }
    add('Events (n)', fmt(s.n_events), 'n_events');
    if (s.n_controls !== null && s.n_controls !== undefined) add('Controls', fmt(s.n_controls), 'n_controls');
    const areaKm2 = s.window_area_km2 ?? s.area_km2 ?? (study && study.area_km2);
    const origin = s.window_origin ?? (study && study.area_origin);
    const originText = origin === 'convex_hull' ? ' (hull around the events)' : origin === 'bounding_box' ? ' (rectangle around the events)' : '';
    add('Study area', `${fmt(areaKm2)}\u00a0km²${originText}`, 'area_km2');
    add('Events per km²', fmt(s.intensity_per_km2), 'intensity_per_km2');
    const mc = s.mean_centre || {};
    if (Number.isFinite(num(mc.lon)) && Number.isFinite(num(mc.lat))) {
      add('Mean centre', `longitude ${fmtFixed(mc.lon, 5)}°, latitude ${fmtFixed(mc.lat, 5)}°`, 'mean_centre');
    } else {
      const x = mc.x_m ?? mc.x;
      const y = mc.y_m ?? mc.y;
      if (Number.isFinite(num(x))) add('Mean centre', `x ${fmtFixed(x, 1)} m, y ${fmtFixed(y, 1)} m (grid of the file)`, 'mean_centre');
    }
    add('Standard distance', fmtMetres(s.standard_distance_m), 'standard_distance_m');
    const e = s.ellipse;
    if (e) {
      const angle = e.major_axis_angle_deg ?? e.angle_deg;
      add('Deviational ellipse', lines(`${fmtMetres(e.semi_major_m)} by ${fmtMetres(e.semi_minor_m)} (one standard deviation along each axis)`, `long axis ${fmt(angle, 3)}° anticlockwise from east`), 'ellipse');
    }
    const nn = s.nearest_neighbour_m ?? s.nn;
    if (nn) {
      add('Nearest-neighbour distance', lines(`min ${fmtMetres(nn.min)}, median ${fmtMetres(nn.median)}`, `mean ${fmtMetres(nn.mean)}, max ${fmtMetres(nn.max)}`), 'nn');
    }
    const t = s.time_span ?? s.time;
    if (t) {
      const clock = state.reports.events && state.reports.events.time_has_clock;
      const show = (v) => (typeof v === 'string' ? v.replace('T', ' ').replace(/:00Z$|Z$/, '') : fmtTime(v, clock));
      add('Time span', `${show(t.first)} to ${show(t.last)} (${fmtDays(t.span_days)})`, 'time');
    }
    const co = s.coincident || (study && study.coincident);
    if (co) {
      add('Coincident points', num(co.locations) > 0 ? `${fmt(co.events)} events share ${plural(co.locations, 'location', 'locations')} (at most ${fmt(co.largest)} at one)` : 'none', 'coincident');
    }
    if (Array.isArray(s.categories) && s.categories.length > 0) {
      for (const c of s.categories) catBody.append(el('tr', null, el('td', null, c.name), el('td', { class: 'n' }, fmt(c.count))));
      catTable.hidden = false;
      $('categories-title').hidden = false;
    }
  }

  function renderQuality(snap) {
    const study = snap && snap.study;
    $('projection-text').textContent = study && study.projection_text ? `Projection: ${study.projection_text}` : '';
    const box = $('quality-counts');
    box.replaceChildren();
    // Counts come from the current study when there is one (it also counts
    // events outside the study area), else from the load report.
    const layerLine = (label, key, report, fromStudy) => {
      if (!report) return;
      const read = fromStudy ? fromStudy.read : report.rows_read;
      const used = fromStudy ? fromStudy.used : report.accepted;
      const rejected = fromStudy ? fromStudy.rejected : report.rejected;
      const p = el('p', { class: 'counts', 'data-layer': key },
        el('strong', null, `${label}: `),
        el('span', { class: 'eq' },
          'rows read ', el('span', { 'data-count': 'read' }, fmt(read)),
          ' = used ', el('span', { 'data-count': 'used' }, fmt(used)),
          ' + not used ', el('span', { 'data-count': 'rejected' }, fmt(rejected))));
      box.append(p);
      const tally = snap.reasons && fromStudy ? snap.reasons[key] : null;
      const reasons = Array.from(tally || report.by_reason || []);
      if (reasons.length > 0) {
        const ul = el('ul', { class: 'reasons' });
        for (const r of reasons) ul.append(el('li', null, `${r.reason_text || r.reason}: ${fmt(r.count)}`));
        box.append(ul);
      }
    };
    layerLine('Events', 'events', state.reports.events,
      study ? { read: study.events_rows_read, used: study.events, rejected: study.events_rejected } : null);
    layerLine('Controls', 'controls', state.reports.controls,
      study && state.controls && study.controls !== null && study.controls !== undefined
        ? { read: study.controls_rows_read, used: study.controls, rejected: study.controls_rejected } : null);
    const ul = $('warnings');
    ul.replaceChildren();
    const warnings = study && Array.isArray(study.warnings) ? study.warnings : [];
    for (const w of warnings) ul.append(el('li', null, w));
    $('rejections').hidden = !state.reports.events;
    $('rej-layer').querySelector('option[value=controls]').disabled = !state.controls;
  }

  async function loadRejections() {
    if (!state.reports.events) return;
    const { layer, offset } = state.rej;
    let res;
    try {
      res = await call('rejections', layer, offset, PAGE_SIZE);
    } catch (err) {
      if (err && err.code === 'engine_stopped') return;
      showError('Could not list the rows not used', err);
      return;
    }
    const total = num(res.total);
    state.rej.total = total;
    $('rej-layer').value = layer;
    const body = $('rej-body');
    body.replaceChildren();
    const rows = Array.from(res.rows || []);
    if (rows.length === 0) {
      body.append(el('tr', null, el('td', { colspan: 4, class: 'note' }, total === 0 ? 'Every row was used.' : 'No rows on this page.')));
    }
    for (const r of rows) {
      body.append(el('tr', null,
        el('td', { class: 'n' }, fmt(r.row)),
        el('td', null, r.column ?? '—'),
        el('td', null, r.reason_text || r.reason),
        el('td', null, r.value === '' || r.value === null || r.value === undefined ? '(empty)' : r.value)));
    }
    const from = total === 0 ? 0 : offset + 1;
    const to = Math.min(offset + PAGE_SIZE, total);
    $('rej-range').textContent = total === 0 ? 'none' : `${fmt(from)}–${fmt(to)} of ${fmt(total)}`;
    $('rej-prev').disabled = offset <= 0;
    $('rej-next').disabled = offset + PAGE_SIZE >= total;
  }

  // ---------- wiring ----------

  /** Runs user actions one after another (the engine answers one request at
   * a time anyway) and counts finished actions in body[data-done] for tests. */
  let queue = Promise.resolve();
  function act(fn) {
    return (...args) => {
      queue = queue
        .then(() => fn(...args))
        .catch((err) => showError('Unexpected problem in the page', err))
        .finally(() => {
          document.body.dataset.done = String(Number(document.body.dataset.done || 0) + 1);
        });
      return queue;
    };
  }

  function wireFileInput(inputId, dropId, handler) {
    const input = $(inputId);
    const readAndHandle = act(async (file) => {
      clearError();
      let bytes;
      try {
        bytes = await readFile(file);
      } catch (err) {
        showError(`Could not open ${file.name}`, { message: String(err && err.message) });
        return;
      }
      await handler(bytes, file.name);
    });
    input.addEventListener('change', () => {
      const file = input.files && input.files[0];
      input.value = ''; // the line below the box names the file in use
      if (file) readAndHandle(file);
    });
    const zone = $(dropId);
    zone.addEventListener('dragover', (e) => {
      e.preventDefault();
      zone.classList.add('over');
    });
    zone.addEventListener('dragleave', () => zone.classList.remove('over'));
    zone.addEventListener('drop', (e) => {
      e.preventDefault();
      zone.classList.remove('over');
      if (input.disabled) return;
      const file = e.dataTransfer && e.dataTransfer.files && e.dataTransfer.files[0];
      if (file) readAndHandle(file);
    });
  }

  function wire() {
    // A file dropped outside a drop box must not replace the page.
    window.addEventListener('dragover', (e) => e.preventDefault());
    window.addEventListener('drop', (e) => e.preventDefault());

    wireFileInput('events-file', 'events-drop', (bytes, name) => loadEvents(bytes, name, {}));
    wireFileInput('area-file', 'area-drop', (bytes, name) => loadArea(bytes, name));
    wireFileInput('controls-file', 'controls-drop', (bytes, name) => loadControls(bytes, name));
    $('demo-button').addEventListener('click', act(loadDemo));
    $('problems-button').addEventListener('click', act(loadProblems));
    $('map-layer').addEventListener('change', () => {
      state.mapLayer = $('map-layer').value;
      showMapping();
    });
    for (const id of ['map-x', 'map-y', 'map-time', 'map-category', 'map-weight', 'map-coords', 'map-date']) {
      $(id).addEventListener('change', act(mappingChanged));
    }
    for (const input of document.querySelectorAll('input[name=area-mode]')) {
      const change = act(() => setAreaMode(input.value));
      input.addEventListener('change', () => { if (input.checked) change(); });
    }
    $('show-controls').addEventListener('change', () => {
      map.showControls = $('show-controls').checked;
      map.redraw();
      renderLegend(state.snap && state.snap.layers);
    });
    $('controls-clear').addEventListener('click', act(clearControls));
    $('error-close').addEventListener('click', clearError);
    $('zoom-in').addEventListener('click', () => map.zoomBy(1.5));
    $('zoom-out').addEventListener('click', () => map.zoomBy(1 / 1.5));
    $('zoom-reset').addEventListener('click', () => map.resetView());
    $('rej-prev').addEventListener('click', act(() => { state.rej.offset = Math.max(0, state.rej.offset - PAGE_SIZE); return loadRejections(); }));
    $('rej-next').addEventListener('click', act(() => { state.rej.offset += PAGE_SIZE; return loadRejections(); }));
    $('rej-layer').addEventListener('change', act(() => { state.rej.layer = $('rej-layer').value; state.rej.offset = 0; return loadRejections(); }));
  }

  function enableInputs() {
    for (const id of ['events-file', 'area-file', 'controls-file', 'demo-button', 'problems-button']) $(id).disabled = false;
    $('area-mode').disabled = false;
    if (!$('demo-cases')) {
      $('demo-button').hidden = true;
      $('problems-button').hidden = true;
    } else if (!$('demo-problems')) {
      $('problems-button').hidden = true;
    }
    renderAreaMode();
  }

  // ---------- the API analysis panels use (www/analyses/*.js) ----------
  // Each analysis adds a section to the results area, calls the engine through
  // `call` / `runJob`, may draw on the map through an overlay, and hears about
  // every change of the loaded data through `onSnapshot`.
  window.Cloister = {
    call,
    runJob,
    el,
    fmt,
    fmtFixed,
    fmtMetres,
    plural,
    setStatus,
    showError,
    clearError,
    act,
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
    /** One option of an analysis as the engine describes it (kind, unit,
     * default, min, max, allowed): the one home of defaults and limits. */
    param(method, name) {
      const spec = state.spec && state.spec.find((x) => x.analysis === method);
      return spec ? spec.fields.find((f) => f.name === name) || null : null;
    },
  };

  /** Gives every control marked data-param="method.option" the limits of
   * that option (times data-param-scale, e.g. 100 for a percent), and its
   * default when the control is empty and has no placeholder. */
  function applyParameterLimits(root = document) {
    const found = [...root.querySelectorAll('[data-param]')];
    if (root.matches && root.matches('[data-param]')) found.push(root);
    for (const input of found) {
      const [method, name] = input.dataset.param.split('.');
      const f = window.Cloister.param(method, name);
      if (!f) continue;
      const scale = Number(input.dataset.paramScale || 1);
      if (f.min !== null) input.min = String(f.min * scale);
      if (f.max !== null) input.max = String(f.max * scale);
      if (f.kind === 'integer') input.step = '1';
      if (input.value === '' && !input.placeholder && typeof f.default === 'number') input.value = String(f.default * scale);
    }
  }

  async function boot() {
    map = new PointMap($('map'));
    wire();
    try {
      const bytes = decodeBase64($('cloister-wasm').textContent);
      state.module = await WebAssembly.compile(bytes);
      await wasm_bindgen({ module_or_path: state.module });
      $('version').textContent = `version ${wasm_bindgen.version()}`;
      state.spec = wasm_bindgen.parameterSpec();
      applyParameterLimits();
      // Panels built later get their limits as they are added.
      new MutationObserver((changes) => {
        for (const c of changes) for (const n of c.addedNodes) if (n.nodeType === 1) applyParameterLimits(n);
      }).observe(document.body, { childList: true, subtree: true });
      await startWorker();
    } catch (err) {
      showError('The engine could not start', err);
      setStatus('Engine not available.');
      return;
    }
    enableInputs();
    document.body.dataset.ready = '1';
    setStatus('Ready. Load an events file, or the demo.');
  }

  window.addEventListener('error', (e) => showError('Unexpected problem in the page', { message: e.message }));
  window.addEventListener('unhandledrejection', (e) => showError('Unexpected problem in the page', e.reason));

  boot();
})();
