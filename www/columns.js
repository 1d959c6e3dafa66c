/* The column editor: which column plays which role (x, y, time, time until, category,
 * weight), the kind of coordinates and the date order, for the events or the
 * controls file; and the header's names offered when the engine could not
 * find a file's coordinate columns. */

import { $, el } from './dom.js';
import { state } from './state.js';

const ROLES = ['x', 'y', 'time', 'time_until', 'category', 'weight'];
// A role left to the engine to find by the column's name (while the user
// chooses the coordinate columns of a file whose names said nothing).
const BY_NAME = '\u0000by-name';

export function currentOptions() {
  const mapping = {};
  for (const role of ROLES) {
    const sel = $(`map-${role}`);
    if (!sel.disabled && sel.value !== BY_NAME) mapping[role] = sel.value;
  }
  const kind = $('map-coords').value;
  const coords = kind === 'lon_lat' ? { kind: 'lon_lat' } : { kind: 'planar', unit: kind };
  const order = $('map-date').value;
  // Empty = let the engine detect the order from the dates.
  const o = order === '' ? { mapping, coords } : { mapping, coords, date_order: order };
  if ($('map-keep-far').checked) o.keep_far_points = true;
  return o;
}

/** The date order the engine used and why; when the dates cannot tell,
 * a question with one example read both ways (the user's answer re-reads
 * the file through the date-order control). */
function renderDateOrder(report, given) {
  const info = report && report.date_order;
  $('date-order-text').hidden = !info;
  $('date-order-text').textContent = info ? `Dates: ${info.text}.` : '';
  const ask = !!(report && report.date_order_ambiguous && !given && info && info.example);
  $('date-question').hidden = !ask;
  if (!ask) return;
  const ex = info.example;
  $('date-question-text').textContent = `Are the dates day/month/year or month/day/year? The file cannot tell: every date has day and month both 12 or less. Row ${ex.row} holds ${ex.value}.`;
  const answer = (id, order, label, iso) => {
    const b = $(id);
    b.textContent = `${label}: ${ex.value} is ${iso}`;
    b.removeAttribute('aria-label'); // the text names it now
    b.onclick = () => {
      $('map-date').value = order;
      $('map-date').dispatchEvent(new Event('change'));
    };
  };
  answer('date-dmy', 'day_month_year', 'Day first', ex.day_month_year);
  answer('date-mdy', 'month_day_year', 'Month first', ex.month_day_year);
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
    const xy = role === 'x' || role === 'y';
    sel.append(el('option', { value: '' }, xy ? '(choose a column)' : '(not used)'));
    // Not read yet: the other roles are found by name unless chosen.
    const byName = pending && !xy && chosen !== '';
    if (byName) sel.append(el('option', { value: BY_NAME }, '(found by its name)'));
    for (const c of columns) sel.append(el('option', { value: c }, c));
    sel.value = chosen && columns.includes(chosen) ? chosen : byName ? BY_NAME : '';
  }
  const coords = report.coords || {};
  $('map-coords').value = coords.kind === 'planar' ? coords.unit || 'metre' : 'lon_lat';
  const kept = state.mapLayer === 'controls' ? state.controls : state.events;
  const opts = pending && state.pendingFile ? state.pendingFile.options : kept ? kept.options : {};
  $('map-date').value = (opts && opts.date_order) || '';
  renderDateOrder(pending ? null : report, !!(opts && opts.date_order));
  // The controls always use the events' kind of coordinates.
  $('map-coords').disabled = state.mapLayer === 'controls';
  if (pending) return;
  const fmtInfo = report.format || {};
  let how = 'GeoJSON points';
  if (fmtInfo.format === 'csv') {
    const d = fmtInfo.delimiter === '\t' ? 'tab' : fmtInfo.delimiter === ';' ? 'semicolon' : fmtInfo.delimiter === ',' ? 'comma' : `"${fmtInfo.delimiter}"`;
    how = `Table separated by ${d}${fmtInfo.decimal_comma ? ', decimal comma' : ''}`;
  }
  if (report.encoding_name) how += `, text in ${report.encoding_name}`;
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
 * keep the bytes and let the user choose the columns in the editor. The
 * engine's error carries the header's names as it decoded them (any
 * encoding); the page's own reading of the first line is the fallback.
 * Returns true when the editor is offered. */
export function offerColumns(layer, bytes, name, options, err) {
  const wasPending = state.pendingFile && state.pendingFile.layer === layer && state.pendingFile.bytes === bytes;
  const fromEngine = err && err.code === 'missing_columns' && Array.isArray(err.columns) ? err.columns : null;
  const columns = fromEngine || (err && (err.code === 'missing_columns' || wasPending) ? headerColumns(bytes) : []);
  let offered = false;
  if (columns.length > 1) {
    state.pendingFile = { layer, bytes, name, options, columns };
    state.mapLayer = layer;
    offered = true;
  } else if (wasPending) {
    state.pendingFile = null;
  }
  showMapping();
  return offered && !!err && err.code === 'missing_columns';
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
    const columns = p.columns || headerColumns(p.bytes);
    renderPendingMapping(columns, p.name, p.options);
  } else {
    renderMapping(state.reports[state.mapLayer]);
  }
}
