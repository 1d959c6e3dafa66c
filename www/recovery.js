/* When the engine stops (a trap in the wasm or a dead worker): start a fresh
 * worker, read the kept files into it again, and tell the user. */

import { $ } from './dom.js';
import { state } from './state.js';
import { setStatus, showError } from './status.js';
import { startWorker, stopWorker, post } from './engine.js';
import { showMapping } from './columns.js';
import { renderAreaMode, sharedCoords, controlsOptions } from './loading.js';
import { refresh } from './results.js';

/** The wasm instance trapped or the worker died: start a fresh one and
 * read the kept files into it again. Requests made meanwhile wait. */
export function restartEngine(reason) {
  restart(reason, false);
}

/** Cancel that could not wait for the engine to stop by itself: end the
 * worker now (every request ends as 'cancelled'), start a fresh one and
 * read the kept files into it again. */
export function cancelByRestart() {
  restart(null, true);
}

function restart(reason, cancelled) {
  if (state.restarting) return;
  state.restarting = true;
  stopWorker(cancelled ? { code: 'cancelled', message: 'Cancelled.' } : undefined);
  const why = reason ? ` (Technical detail: ${reason}.)` : '';
  setStatus(cancelled ? 'Cancelled. Restoring your files in a fresh engine…' : 'The engine stopped unexpectedly; restarting it…');
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
      if (cancelled && rebuilt) {
        setStatus(hadFiles
          ? 'Cancelled. Your files are loaded again; results computed before (masks, surfaces) need to be made again.'
          : 'Cancelled.');
      } else if (rebuilt && !hadFiles) {
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
