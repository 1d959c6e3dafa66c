/* The page's shared state, in one object that the modules import (nothing is
 * kept on window). Each group says which modules write it. */

export const state = {
  // The worker client (engine.js, and recovery.js when it restarts the engine).
  module: null,
  worker: null,
  workerUrl: null,
  nextId: 1,
  pending: new Map(),
  progressTimer: 0,
  restarting: false,
  engineReady: null, // a promise while the engine restarts
  // The analyses' options as the engine describes them (main.js, at start).
  spec: null,
  // The loaded data (loading.js, columns.js, results.js, recovery.js).
  // Kept file bytes, so options can change and a crashed engine can be refilled.
  events: null, // {bytes, name, options}
  pendingFile: null, // a file whose coordinate columns the user must choose: {layer, bytes, name, options}
  mapLayer: 'events', // which file the column editor shows
  area: null, // {bytes, name}
  areaMode: 'convex_hull',
  controls: null, // {bytes, name}
  demo: false, // the demo is what is loaded (loading one's own events closes it)
  reports: { events: null, controls: null, area: null },
  snap: null,
  rej: { layer: 'events', offset: 0, total: 0 },
};
