/* The page's one map (a PointMap on #map) and its legend. */

import { $, el, fmt } from './dom.js';
import { state } from './state.js';
import { PointMap, CLOISTER_PALETTE, DENSE_ABOVE } from './map.js';

/** The map; null until createMap() runs (at start, before any file is read). */
export let map = null;

export function createMap() {
  map = new PointMap($('map'));
  return map;
}

export function renderLegend(layers) {
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
  if (!baseHidden && (layers.events.length >> 1) > DENSE_ABOVE) {
    ul.append(el('li', { id: 'legend-dense' }, swatch('dense', CLOISTER_PALETTE.single),
      'Many events: a paler square holds one event, a stronger one more (strongest: the busiest 1 %)'));
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
  // The shaded squares: from one event (opacity 0.3) to the busiest.
  if (colour && kind === 'dense') s.style.background = `linear-gradient(90deg, ${colour}4d, ${colour})`;
  else if (colour) s.style.background = colour;
  return s;
}
