/* Cloister section "Close in space and time": for events with dates, the
 * questions of near repeats, outbreaks and emerging clusters. This module
 * owns the section and its availability line; each analysis of the section
 * lives in its own module (spacetime-*.js) and is mounted below with one
 * line. Every number comes from the engine (src/spacetime/). */

import { mountSpaceTimeTimeline } from './spacetime-timeline.js';
import { mountSpaceTimePairs } from './spacetime-pairs.js';
import { mountSpaceTimeMantelK } from './spacetime-mantelk.js';
import { mountSpaceTimeScan } from './spacetime-scan.js';

export function mountSpaceTime(C) {
  const { el } = C;
  const body = C.addSection('spacetime', 'Close in space and time',
    'Do events close together on the map also come close together in time? ' +
    'Near repeats (a burglary followed by others nearby within days), outbreaks and emerging clusters all show up as pairs of events that are close in both. ' +
    'These tests keep every location and every date as observed and only shuffle which date goes with which place.');
  const needs = el('p', { class: 'hint', id: 'st-needs' }, 'Load events with a date column (step 1) to use this section.');
  body.append(needs);
  // The time line first: it is also the map's time filter.
  mountSpaceTimeTimeline(C, body);
  mountSpaceTimePairs(C, body);
  mountSpaceTimeMantelK(C, body);
  mountSpaceTimeScan(C, body);

  C.onSnapshot((snap) => {
    const span = snap && snap.summary && snap.summary.time_span;
    const ok = !!(span && span.n_with_time >= 2);
    needs.hidden = ok;
    body.dataset.ready = ok ? '1' : '';
  });
  return body;
}
