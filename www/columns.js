/* The column editor: which column plays which role (x, y, time, category,
 * weight), the kind of coordinates and the date order, for the events or the
 * controls file; and the header's names offered when the engine could not
 * find a file's coordinate columns. */

import { $, el } from './dom.js';
import { state } from './state.js';

const ROLES = ['x', 'y', 'time', 'category', 'weight'];

export function currentOptions() {
  const mapping = {};
  for (const role of ROLES) {
    const sel = $(`map-${role}`);
    if (!sel.disabled) mapping[role] = sel.value === '' ? '' : sel.value;
  }
  const kind = $('map-coords').value;
  const coords = kind === 'lon_lat' ? { kind: 'lon_lat' } : { kind: 'planar', unit: kind };
  return { mapping, coords, date_order: $('map-date').value };
}

export function renderMapping(report, pending = false) {
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

/** Column names from the first line of a delimited file, to offer in the
 * mapping editor when the engine could not find the coordinate columns. */
export function headerColumns(bytes) {
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
export function offerColumns(layer, bytes, name, options, err) {
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
export function showMapping() {
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
