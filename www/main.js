/* Cloister page: the entry module. It wires the controls to the loading and
 * results modules, starts the engine, and mounts the analysis panels. Every
 * number shown is computed by the engine; nothing is sent anywhere and
 * nothing is stored. tools/build-page.mjs bundles this module and everything
 * it imports into one classic script inlined in the page (www/README.md has
 * the module graph). */

import { $, decodeBase64 } from './dom.js';
import { state } from './state.js';
import { setStatus, showError, clearError, act } from './status.js';
import { startWorker, onEngineStopped, onHardCancel, cancelAll } from './engine.js';
import { restartEngine, cancelByRestart } from './recovery.js';
import { loadOwnEvents, loadArea, loadControls, clearControls, setAreaMode, loadDemo, loadProblems, mappingChanged, readFile, renderAreaMode } from './loading.js';
import { showMapping } from './columns.js';
import { PAGE_SIZE, loadRejections } from './results.js';
import { map, createMap, renderLegend } from './mapview.js';
import { CLOISTER_PALETTE } from './map.js';
import { panelApi } from './panel-api.js';
import { watchParameterLimits } from './param-limits.js';
import { mountClustering } from './analyses/clustering.js';
import { mountHotspots } from './analyses/hotspots.js';
import { mountSharing } from './analyses/sharing.js';
import { mountRisk } from './analyses/risk.js';
import { mountRiskInhom } from './analyses/risk-inhom.js';
import { mountSpaceTime } from './analyses/spacetime.js';

/* `wasm_bindgen` is the one global this module reads: the wasm-bindgen glue
 * (built with --target no-modules) defines it in its own inline script. */

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

  wireFileInput('events-file', 'events-drop', (bytes, name) => loadOwnEvents(bytes, name));
  wireFileInput('area-file', 'area-drop', (bytes, name) => loadArea(bytes, name));
  wireFileInput('controls-file', 'controls-drop', (bytes, name) => loadControls(bytes, name));
  // Not through act(): Cancel must not wait behind the work it stops.
  $('busy-cancel').addEventListener('click', cancelAll);
  $('demo-button').addEventListener('click', act(loadDemo));
  $('problems-button').addEventListener('click', act(loadProblems));
  $('demo-counts-button').addEventListener('click', act(() => loadDemo({ counts: true })));
  $('map-layer').addEventListener('change', () => {
    state.mapLayer = $('map-layer').value;
    showMapping();
  });
  for (const id of ['map-x', 'map-y', 'map-time', 'map-category', 'map-weight', 'map-coords', 'map-date', 'map-keep-far']) {
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
  for (const id of ['events-file', 'area-file', 'controls-file', 'demo-button', 'problems-button', 'demo-counts-button']) $(id).disabled = false;
  if (!$('demo-cases') || !$('demo-population-blocks')) $('demo-counts-button').hidden = true;
  $('area-mode').disabled = false;
  if (!$('demo-cases')) {
    $('demo-button').hidden = true;
    $('problems-button').hidden = true;
  } else if (!$('demo-problems')) {
    $('problems-button').hidden = true;
  }
  renderAreaMode();
}

async function boot() {
  createMap();
  wire();
  try {
    const bytes = decodeBase64($('cloister-wasm').textContent);
    state.module = await WebAssembly.compile(bytes);
    await wasm_bindgen({ module_or_path: state.module });
    $('version').textContent = `version ${wasm_bindgen.version()}`;
    watchParameterLimits(wasm_bindgen);
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

/** The analysis panels, in the order their sections appear. One that fails to
 * set itself up is reported and the others still come up. */
function mountPanels() {
  for (const [name, mount] of [['clustering', mountClustering], ['population', mountRisk], ['population-inhom', mountRiskInhom], ['hotspots', mountHotspots], ['spacetime', mountSpaceTime], ['sharing', mountSharing]]) {
    try {
      mount(panelApi);
    } catch (err) {
      showError(`Could not set up the ${name} panel`, err);
    }
  }
}

onEngineStopped(restartEngine);
onHardCancel(cancelByRestart);

window.addEventListener('error', (e) => showError('Unexpected problem in the page', { message: e.message }));
window.addEventListener('unhandledrejection', (e) => showError('Unexpected problem in the page', e.reason));

boot();
mountPanels();

/* For the browser console and the end-to-end tests only: the panel API and
 * the palette. No module of the page reads this. */
window.Cloister = Object.freeze({ ...panelApi, palette: CLOISTER_PALETTE });
