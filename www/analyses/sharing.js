/* Cloister panel "Sharing safely": mask the points once, count them per area
 * with small counts hidden, look at what masking costs, and save files that
 * may leave this computer (masked points, counts, map pictures, a report).
 * Every number comes from the engine (src/web/sharing.rs); this file draws
 * and saves. Files are saved by the browser from a Blob: nothing is sent. */
import { CLOISTER_PALETTE } from '../map.js';

/** Adds the panel to the page; C is the page's panel API (www/panel-api.js). */
export function mountSharing(C) {
  const { el, fmt, fmtMetres, call, act, setStatus, showError, clearError } = C;
  const $ = (id) => document.getElementById(id);

  const MASK_COLOUR = '#1b1b1b';
  // A light-to-dark ramp of our own for counts per cell (5 classes).
  const RAMP = ['#fbeec4', '#f3c27a', '#e08f3f', '#b75a1f', '#7a2e0b'];
  const HATCH_LINE = '#5b6470';

  const state = {
    snap: null,
    mask: null, // result of maskDonut / maskKAnonymity
    cost: null,
    table: null, // result of aggregate
    classes: null, // [{lo, hi, colour}]
    onlyShared: false,
    pending: null, // {what, format, preview}
  };

  // ---------- markup ----------

  const num = (id, value, attrs = {}) => el('input', { type: 'number', id, value, step: 'any', min: '0', ...attrs });
  const field = (label, input, hint) => el('label', { class: 'share-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const body = C.addSection('sharing', 'Sharing safely',
    'Make results that may leave this computer: masked points, or counts per area with small counts hidden. ' +
    'Everything is computed in this page; files are saved by your browser and nothing is sent anywhere.');

  const cautions = el('ul', { class: 'share-cautions', id: 'share-cautions' });
  body.append(el('div', { class: 'warn share-warn' }, el('strong', null, 'Before anything leaves: '), cautions));

  // 1. Masking
  const maskBox = el('fieldset', { class: 'share-box', id: 'share-mask-box' },
    el('legend', null, '1. Mask the points (once)'),
    el('div', { class: 'share-methods', role: 'radiogroup', 'aria-label': 'Masking method' },
      el('label', null, el('input', { type: 'radio', name: 'share-method', value: 'ring', id: 'share-method-ring', checked: true }), ' Random shift within a ring'),
      el('label', null, el('input', { type: 'radio', name: 'share-method', value: 'k', id: 'share-method-k' }), ' Shift until at least k people are as close')),
    el('div', { class: 'share-grid', id: 'share-ring-fields' },
      field('Smallest shift (m)', num('share-rmin', '', { 'data-param': 'maskDonut.r_min_m' })),
      field('Largest shift (m)', num('share-rmax', '', { 'data-param': 'maskDonut.r_max_m' })),
      field('Distance drawn', el('select', { id: 'share-law' },
        el('option', { value: 'area_uniform' }, 'even over the ring\u2019s area'),
        el('option', { value: 'distance_uniform' }, 'even over distance')))),
    el('div', { class: 'share-grid', id: 'share-k-fields', hidden: true },
      field('At least k', num('share-k', '', { 'data-param': 'maskKAnonymity.target_k' })),
      field('Largest shift (m)', num('share-kmax', '', { 'data-param': 'maskKAnonymity.r_max_m' })),
      field('Smallest shift (m)', num('share-kmin', '', { 'data-param': 'maskKAnonymity.r_min_m' })),
      field('Count k against', el('select', { id: 'share-against' },
        el('option', { value: 'population' }, 'the loaded population layer'),
        el('option', { value: 'density' }, 'a residential density I type'))),
      field('Residential density (per km²)', num('share-density', 1000, { 'data-param': 'maskKAnonymity.density_per_km2' }), 'k expected from it, not counted'),
      field('Area factor', num('share-factor', '', { 'data-param': 'maskKAnonymity.area_factor' }), '3 is suggested (Allshouse et al. 2010)'),
      el('label', { class: 'check share-wide' }, el('input', { type: 'checkbox', id: 'share-keep-below' }), ' keep points that fall short of k (listed), instead of leaving them out')),
    el('div', { class: 'share-actions' },
      el('button', { type: 'button', id: 'share-mask', disabled: true }, 'Mask the points'),
      el('label', { class: 'check' }, el('input', { type: 'checkbox', id: 'share-only', disabled: true }), ' Show only what would be shared (hide the original points)')),
    el('div', { class: 'warn', id: 'share-remask', hidden: true, role: 'alertdialog', 'aria-labelledby': 'share-remask-text' },
      el('p', { id: 'share-remask-text' },
        'These points are already masked. Mask once: if two differently masked copies of the same points are ever released, ' +
        'averaging them moves the points back towards the true locations (Cassa, Wieland & Mandl 2008). ' +
        'Replace the masked copy only if the current one has never left this computer.'),
      el('div', { class: 'share-actions' },
        el('button', { type: 'button', id: 'share-remask-yes' }, 'Replace the masked copy'),
        el('button', { type: 'button', id: 'share-remask-no', class: 'quiet' }, 'Keep the current copy'))),
    el('div', { id: 'share-mask-result', class: 'share-result' }));
  body.append(maskBox);

  // 2. Aggregation
  const aggBox = el('fieldset', { class: 'share-box', id: 'share-agg-box' },
    el('legend', null, '2. Count per area'),
    el('div', { class: 'share-grid' },
      field('Areas', el('select', { id: 'share-layout' },
        el('option', { value: 'square' }, 'square cells'),
        el('option', { value: 'hexagon' }, 'hexagon cells'),
        el('option', { value: 'zones' }, 'zones from a file'))),
      field('Cell size (m)', num('share-cell', 500, { 'data-param': 'aggregate.cell_size_m' }), 'square side or hexagon side'),
      field('Zones file (GeoJSON polygons)', el('input', { type: 'file', id: 'share-zones', accept: '.geojson,.json' })),
      field('Hide counts below', num('share-min', '', { 'data-param': 'aggregate.min_count' }), ''),
      el('label', { class: 'check share-wide' }, el('input', { type: 'checkbox', id: 'share-totals', checked: true }), ' publish row and column totals (protected by hiding further cells)')),
    el('p', { class: 'hint', id: 'share-threshold-note' }),
    el('div', { class: 'share-actions' },
      el('button', { type: 'button', id: 'share-aggregate', disabled: true }, 'Count per area')),
    el('div', { id: 'share-agg-result', class: 'share-result' }));
  body.append(aggBox);

  // 3. Files
  const exportButtons = [
    ['masked_points', 'csv', 'Masked points (CSV)'],
    ['masked_points', 'geo_json', 'Masked points (GeoJSON)'],
    ['aggregates', 'csv', 'Counts per area (CSV)'],
    ['aggregates', 'geo_json', 'Counts per area (GeoJSON)'],
    ['map_png', 'png', 'Map picture (PNG)'],
    ['report', 'html', 'Report (one HTML file)'],
  ];
  const fileBox = el('fieldset', { class: 'share-box', id: 'share-file-box' },
    el('legend', null, '3. Save files'),
    el('div', { class: 'share-grid' },
      field('Coordinates in files', el('select', { id: 'share-coords' },
        el('option', { value: 'lon_lat' }, 'longitude / latitude'),
        el('option', { value: 'metres' }, 'planar metres as analysed'))),
      field('Notes in CSV files', el('select', { id: 'share-notes', title: 'Where a CSV file says what it holds (tool, date, masking settings, cautions)' },
        el('option', { value: 'last_column' }, 'in a last column (for spreadsheets)'),
        el('option', { value: 'top_lines' }, 'as # lines above the header (for scripts)'))),
      field('Dates in point files: shift by up to \u00b1 days', el('input', { type: 'number', id: 'share-date-shift', 'data-param': 'exportFile.date_shift_days', placeholder: 'no dates', min: '1', step: '1', title: 'Empty: point files hold no dates. A number N: each event\u2019s date is written moved by a random whole number of days from \u2212N to +N (both ends of a from\u2013to window by the same days). Near-repeat and other space\u2013time results at time gaps up to about 2N days are unreliable in such a file.' })),
      field('Seed of the date shifts', el('input', { type: 'text', id: 'share-date-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false', placeholder: 'new one each file', title: 'Empty: a new random seed; it is never written into the file' })),
      el('label', { class: 'check', title: 'Settings, the global test and the shares of the area inside the pointwise lines; never a place. Draw the surface first under "Compared with the population".' },
        el('input', { type: 'checkbox', id: 'share-risk' }), ' Report: add the relative-risk summary'),
      el('label', { id: 'share-holds-field', hidden: true }, 'Map picture and report show ',
        el('select', { id: 'share-holds' },
          el('option', { value: 'counts' }, 'counts per area'),
          el('option', { value: 'masked_points' }, 'masked points'),
          el('option', { value: 'both' }, 'both')))),
    el('p', { class: 'hint', id: 'share-holds-hint', hidden: true }, 'Masked points and counts with hidden cells never go out together: counting the masked points per area would give the hidden counts back. Save one or the other.'),
    el('div', { class: 'share-exports' },
      ...exportButtons.map(([what, format, label]) => el('button', { type: 'button', class: 'quiet', 'data-export': `${what}:${format}`, disabled: true }, label))),
    el('p', { class: 'hint', id: 'share-png-hint' }, 'The map picture can be saved only while the map shows only what would be shared (tick the box in step 1).'),
    el('details', { class: 'share-internal' },
      el('summary', null, 'Unmasked export, internal use only'),
      el('p', { class: 'hint' }, 'The original locations, for your own archive. The file says "unmasked, internal use only" inside. Never share it.'),
      el('button', { type: 'button', class: 'quiet danger', 'data-export': 'unmasked_points:csv', disabled: true }, 'Original points, unmasked (CSV)')),
    el('div', { id: 'share-preview', class: 'share-preview', hidden: true, role: 'region', 'aria-labelledby': 'share-preview-title' }));
  body.append(fileBox);

  // ---------- helpers ----------

  const value = (id) => Number($(id).value);
  const method = () => (document.querySelector('input[name=share-method]:checked') || {}).value || 'ring';

  function table(headers, rows, cls = 'small') {
    return el('table', { class: cls },
      el('thead', null, el('tr', null, ...headers.map((h, i) => el('th', { scope: 'col', class: i > 0 ? 'n' : null }, h)))),
      el('tbody', null, ...rows.map((r) => el('tr', null, ...r.map((c, i) => (i === 0 ? el('th', { scope: 'row' }, c) : el('td', { class: 'n' }, c)))))));
  }

  /** True when some count is hidden. */
  function hiddenCounts() {
    return !!(state.table && state.table.table.cells.some((c) => c.suppressed));
  }

  /** Which shared layers go into pictures and the report (never masked
   * points together with hidden counts). */
  function sharedParts() {
    const both = !!(state.mask && state.table);
    const v = both ? $('share-holds').value : null;
    return { points: !!state.mask && v !== 'counts', counts: !!state.table && v !== 'masked_points' };
  }

  function areaFromFile() {
    return !!(state.snap && state.snap.study && state.snap.study.area_origin === 'file');
  }

  function hasData() {
    return !!(state.snap && state.snap.study);
  }

  function updateButtons() {
    const data = hasData();
    $('share-mask').disabled = !data;
    $('share-aggregate').disabled = !data;
    $('share-only').disabled = !(state.mask || state.table);
    if (!state.mask && !state.table) $('share-only').checked = false;
    state.onlyShared = $('share-only').checked;
    const geographic = !!(state.snap && state.snap.study && state.snap.study.projection && state.snap.study.projection.kind === 'transverse_mercator');
    const coords = $('share-coords');
    if (coords.dataset.geographic !== String(geographic)) {
      // New data: longitude/latitude when the events came that way.
      coords.dataset.geographic = String(geographic);
      coords.querySelector('option[value=lon_lat]').disabled = !geographic;
      coords.value = geographic ? 'lon_lat' : 'metres';
    }
    for (const b of document.querySelectorAll('#sharing [data-export]')) {
      const [what] = b.dataset.export.split(':');
      b.disabled = what === 'masked_points' ? !state.mask
        : what === 'aggregates' ? !state.table
          : what === 'map_png' ? !(state.onlyShared && (state.mask || state.table))
            : what === 'report' ? !(state.mask || state.table)
              : !data;
    }
    $('share-png-hint').hidden = state.onlyShared;
    const both = !!(state.mask && state.table);
    $('share-holds-field').hidden = !both;
    const hidden = hiddenCounts();
    $('share-holds').querySelector('option[value=both]').disabled = hidden;
    if (hidden && $('share-holds').value === 'both') $('share-holds').value = 'counts';
    $('share-holds-hint').hidden = !(both && hidden);
    const against = $('share-against');
    const hasPop = !!(state.snap && state.snap.study && state.snap.study.controls);
    against.querySelector('option[value=population]').disabled = !hasPop;
    if (!hasPop) against.value = 'density';
    else if (against.dataset.hadPop !== '1') against.value = 'population';
    against.dataset.hadPop = hasPop ? '1' : '0';
    densityFields();
  }

  function thresholdNote() {
    const m = Math.max(1, Math.round(value('share-min')) || 5);
    $('share-threshold-note').textContent = m > 1
      ? `Counts from 1 to ${m - 1} will be hidden${m === 5 ? ' (the default 5 is common practice, no single source; your rules may ask for more)' : ''}. ` +
        'Further cells are hidden so no hidden count follows from the totals; an audit checks it.'
      : 'No count will be hidden: a threshold of 1 hides nothing.';
  }

  // ---------- map overlay ----------

  let hatch = null;
  function hatchPattern(ctx, dpr) {
    if (!hatch || hatch.dpr !== dpr) {
      const s = Math.max(6, Math.round(7 * dpr));
      const c = document.createElement('canvas');
      c.width = s; c.height = s;
      const g = c.getContext('2d');
      g.fillStyle = '#e4e7eb';
      g.fillRect(0, 0, s, s);
      g.strokeStyle = HATCH_LINE;
      g.lineWidth = Math.max(1, dpr);
      g.beginPath();
      g.moveTo(0, s); g.lineTo(s, 0);
      g.moveTo(-s / 2, s / 2); g.lineTo(s / 2, -s / 2);
      g.moveTo(s / 2, s * 1.5); g.lineTo(s * 1.5, s / 2);
      g.stroke();
      hatch = { dpr, canvas: c };
    }
    return ctx.createPattern(hatch.canvas, 'repeat');
  }

  function ringPath(geo, polygons) {
    const path = new Path2D();
    for (const poly of polygons || []) {
      for (const ring of poly) {
        if (!ring || ring.length < 2) continue;
        path.moveTo(geo.toX(ring[0][0]), geo.toY(ring[0][1]));
        for (let i = 1; i < ring.length; i++) path.lineTo(geo.toX(ring[i][0]), geo.toY(ring[i][1]));
        path.closePath();
      }
    }
    return path;
  }

  function classOf(count) {
    for (const c of state.classes || []) if (count >= c.lo && count <= c.hi) return c;
    return null;
  }

  /** Class breaks over the shown positive counts (about equal numbers of cells per class). */
  function makeClasses(cells) {
    const v = cells.map((c) => c.count).filter((n) => n !== null && n !== undefined && n > 0).sort((a, b) => a - b);
    if (v.length === 0) return [];
    const uniq = Array.from(new Set(v));
    const k = Math.min(RAMP.length, uniq.length);
    const edges = [];
    for (let i = 1; i < k; i++) edges.push(v[Math.min(v.length - 1, Math.floor((i * v.length) / k))]);
    const bounds = Array.from(new Set([v[0], ...edges])).sort((a, b) => a - b);
    const classes = bounds.map((lo, i) => ({ lo, hi: i + 1 < bounds.length ? bounds[i + 1] - 1 : v[v.length - 1] }));
    const useful = classes.filter((c) => c.hi >= c.lo);
    const offset = RAMP.length - useful.length;
    return useful.map((c, i) => ({ ...c, colour: RAMP[Math.min(RAMP.length - 1, offset + i)] }));
  }

  /** Draws the shared layers. `wipe` first covers everything beneath (the
   * original points, the ellipse, other overlays) with the background. */
  function drawShared(ctx, geo, wipe) {
    const dpr = geo.dpr || 1;
    const layers = state.snap && state.snap.layers;
    // Pictures and the shared-only view: the chosen layers only.
    const parts = wipe ? sharedParts() : { points: true, counts: true };
    let areaPath = null;
    if (wipe) {
      ctx.fillStyle = CLOISTER_PALETTE.background;
      ctx.fillRect(0, 0, geo.W, geo.H);
      if (areaFromFile() && layers) {
        areaPath = ringPath(geo, layers.area);
        ctx.fillStyle = CLOISTER_PALETTE.areaFill;
        ctx.fill(areaPath, 'evenodd');
      }
    }
    if (state.table && parts.counts) {
      const cells = state.table.table.cells;
      const pattern = hatchPattern(ctx, dpr);
      ctx.globalAlpha = wipe ? 1 : 0.85;
      for (const c of cells) {
        if (!c.in_area && !c.suppressed && !c.count) continue;
        const path = ringPath(geo, c.geometry);
        if (c.suppressed) {
          ctx.fillStyle = pattern;
          ctx.fill(path, 'evenodd');
        } else if (c.count > 0) {
          const cl = classOf(c.count);
          ctx.fillStyle = cl ? cl.colour : RAMP[RAMP.length - 1];
          ctx.fill(path, 'evenodd');
        }
        ctx.strokeStyle = 'rgba(60,60,60,0.35)';
        ctx.lineWidth = Math.max(1, 0.6 * dpr);
        ctx.stroke(path);
      }
      ctx.globalAlpha = 1;
    }
    if (areaPath) {
      ctx.lineWidth = Math.max(1, 1.5 * dpr);
      ctx.strokeStyle = CLOISTER_PALETTE.areaLine;
      ctx.stroke(areaPath);
    }
    if (state.mask && state.mask.masked && parts.points) {
      const m = state.mask.masked;
      const r = 3.2 * dpr;
      ctx.lineWidth = Math.max(1, 1.4 * dpr);
      ctx.strokeStyle = MASK_COLOUR;
      ctx.fillStyle = '#ffffff';
      ctx.beginPath();
      for (let i = 0; i + 1 < m.length; i += 2) {
        const x = geo.toX(m[i]);
        const y = geo.toY(m[i + 1]);
        if (x < -r || y < -r || x > geo.W + r || y > geo.H + r) continue;
        ctx.moveTo(x + r, y);
        ctx.arc(x, y, r, 0, 2 * Math.PI);
      }
      ctx.fill();
      ctx.stroke();
    }
  }

  function legendItems() {
    const items = [];
    if (state.onlyShared) items.push({ label: 'Original points: hidden (only what would be shared is drawn)', colour: '#ffffff', kind: 'none', hidesBase: true });
    if (state.onlyShared && !areaFromFile()) items.push({ label: 'Study area not drawn (it was drawn around the original points)', colour: '#ffffff', kind: 'none' });
    const parts = state.onlyShared ? sharedParts() : { points: true, counts: true };
    if (state.mask && parts.points) items.push({ label: `Masked points (${fmt(state.mask.n_masked)})`, colour: MASK_COLOUR, kind: 'masked' });
    if (state.table && parts.counts) {
      for (const c of state.classes || []) {
        items.push({ label: c.lo === c.hi ? `${fmt(c.lo)} events per area` : `${fmt(c.lo)}–${fmt(c.hi)} events per area`, colour: c.colour, kind: 'fill' });
      }
      items.push({ label: `Hidden count (suppressed; ${state.table.counts_hidden_to > 0 ? `1–${state.table.counts_hidden_to} or hidden to protect another` : 'none'})`, colour: HATCH_LINE, kind: 'hatch' });
      items.push({ label: '0 events: outline only', colour: '#888888', kind: 'line' });
    }
    return items;
  }

  function redrawOverlay() {
    if (state.mask || state.table) C.setOverlay('sharing', (ctx, geo) => drawShared(ctx, geo, state.onlyShared), legendItems());
    else C.setOverlay('sharing', null);
  }

  /** Puts this overlay above every other one (so nothing beneath shows). */
  async function overlayOnTop() {
    C.setOverlay('sharing', null);
    redrawOverlay();
    await new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r)));
  }

  // ---------- rendering results ----------

  function renderCautions(list) {
    cautions.replaceChildren(...list.map((c) => el('li', null, c)));
  }

  function renderMask() {
    const box = $('share-mask-result');
    box.replaceChildren();
    const m = state.mask;
    if (!m) return;
    const d = m.displacement;
    box.append(el('p', { class: 'share-lead', id: 'share-mask-summary' },
      `${fmt(m.n_masked)} of ${fmt(m.n_input)} points masked (${m.method === 'donut' ? 'random shift within a ring' : `at least k = ${fmt(m.target_k)} as close`}); ` +
      `${fmt(m.unplaced.length)} could not be masked as asked and are left out of every file.`));
    const rows = [];
    if (d) rows.push(['Shift achieved', fmtMetres(d.min), fmtMetres(d.q1), fmtMetres(d.median), fmtMetres(d.q3), fmtMetres(d.max)]);
    box.append(table(['', 'min', 'lower quartile', 'median', 'upper quartile', 'max'], rows));
    if (m.k_summary) {
      const k = m.k_summary;
      const expected = m.basis === 'uniform_density' ? ' (expected from the density, not counted)' : '';
      box.append(el('table', { class: 'small', id: 'share-k-table' }, el('tbody', null,
        el('tr', null, el('th', { scope: 'row' }, `k achieved${expected}`), el('td', { class: 'n' }, `min ${fmt(k.min, 3)}`), el('td', { class: 'n' }, `5th percentile ${fmt(k.p05, 3)}`), el('td', { class: 'n' }, `median ${fmt(k.median, 3)}`),
          el('td', { class: 'n' }, `below target ${fmt(100 * k.share_below_target, 3)} %`)))));
    }
    const listed = [...m.unplaced.map((u) => ({ ...u, kept: false })), ...(m.below_target || []).map((u) => ({ ...u, kept: true }))];
    if (listed.length > 0) {
      box.append(el('h3', null, `Points not masked as asked (${fmt(listed.length)})`));
      box.append(el('div', { class: 'table-scroll share-scroll' },
        el('table', { class: 'small', id: 'share-unplaced' },
          el('thead', null, el('tr', null, el('th', { scope: 'col', class: 'n' }, 'Row of the events file'), el('th', { scope: 'col' }, 'Why'))),
          el('tbody', null, ...listed.slice(0, 500).map((u) => el('tr', null, el('td', { class: 'n' }, u.row === null || u.row === undefined ? '—' : fmt(u.row)),
            el('td', { class: 'note' }, u.kept ? `${u.reason_text.replace(/; left out of exports$/, '')}; kept below the target` : u.reason_text)))))));
      if (listed.length > 500) box.append(el('p', { class: 'hint' }, `…and ${fmt(listed.length - 500)} more.`));
    }
    for (const n of m.notes || []) box.append(el('p', { class: 'warn' }, n));
    box.append(el('h3', null, 'What masking costs the analysis'));
    box.append(el('div', { id: 'share-cost' }, state.cost ? costTable(state.cost) : el('p', { class: 'hint' }, 'Working…')));
  }

  function costTable(c) {
    const o = c.original;
    const k = c.masked;
    const rows = [
      ['Points', fmt(o.n), fmt(k.n), fmt(k.n - o.n)],
      ['Mean nearest-neighbour distance', fmtMetres(o.mean_nn_m), fmtMetres(k.mean_nn_m), fmtMetres(c.mean_nn_change_m)],
      ['Clark–Evans R', fmt(o.clark_evans_r, 3), fmt(k.clark_evans_r, 3), fmt(c.clark_evans_change, 3)],
      ['Standard distance', fmtMetres(o.standard_distance_m), fmtMetres(k.standard_distance_m), fmtMetres(c.standard_distance_change_m)],
      ['Mean centre', '', '', `moved ${fmtMetres(c.centre_shift_m)}`],
    ];
    if (c.surface) {
      rows.push([`Kernel surface (bandwidth ${fmtMetres(c.surface.bandwidth_m)})`, '', '',
        `largest change ${fmt(100 * c.surface.max_abs_diff_rel, 3)} % of the peak, mean ${fmt(100 * c.surface.mean_abs_diff_rel, 3)} %`]);
    }
    if (c.l_curves) {
      const lc = c.l_curves;
      let at = 0;
      lc.original.forEach((v, i) => { if (Math.abs(v - lc.masked[i]) > Math.abs(lc.original[at] - lc.masked[at])) at = i; });
      const peak = (arr) => arr.reduce((m, v, i) => (v > arr[m] ? i : m), 0);
      const po = peak(lc.original), pm = peak(lc.masked);
      rows.push(['L(r) − r, highest value (clustering strength)', `${fmtMetres(lc.original[po])} at ${fmtMetres(lc.r_m[po])}`,
        `${fmtMetres(lc.masked[pm])} at ${fmtMetres(lc.r_m[pm])}`,
        `largest change ${fmtMetres(lc.max_abs_difference_m)} at r = ${fmtMetres(lc.r_m[at])}`]);
    }
    const pr = c.pairs;
    if (pr) {
      const kx = (v) => `${fmt(v.pairs)} pairs, ${v.ratio == null ? 'none expected' : `${fmt(v.ratio, 3)} × expected`}`;
      rows.push([`Knox: pairs within ${fmtMetres(pr.knox_distance_m)} and ${fmt(pr.knox_days)} days`, kx(pr.knox_original), kx(pr.knox_masked),
        `${fmt(pr.knox_masked.pairs - pr.knox_original.pairs)} pairs`]);
    }
    const t = table(['', 'original', 'masked', 'change'], rows);
    t.id = 'share-cost-table';
    return el('div', null, t, pr ? pairShiftTable(pr) : null,
      el('p', { class: 'hint' }, 'Clark–Evans R = mean nearest-neighbour distance / (0.5/√density) (Clark & Evans 1954), without edge correction, the same for both. ' +
        'L(r) − r uses Ripley\'s isotropic edge correction in the study area (0 = as random; above 0 = clustered at that distance). ' +
        'Masking weakens clustering at distances up to about twice the largest shift.'));
  }

  /** The near-repeat table's observed ÷ expected per cell, original → masked
   * (the same dates): masking empties "same location" and moves pairs
   * across the short distance bands. */
  function pairShiftTable(pr) {
    const nt = pr.time_labels.length;
    const r = (v) => (v == null ? '–' : fmt(v, 2));
    const body = pr.space_labels.map((label, a) => el('tr', null, el('th', { scope: 'row' }, label),
      ...pr.time_labels.map((_, b) => {
        const i = a * nt + b;
        const changed = pr.observed_original[i] !== pr.observed_masked[i];
        return el('td', { class: changed ? 'n changed' : 'n', title: `pairs: ${fmt(pr.observed_original[i])} → ${fmt(pr.observed_masked[i])}` },
          `${r(pr.ratio_original[i])} → ${r(pr.ratio_masked[i])}`);
      })));
    return el('div', null,
      el('p', { class: 'hint' }, `Near-repeat table, observed ÷ expected pairs per cell: original → masked (${fmt(pr.events_used)} events with dates, the dates unchanged). ` +
        'Cells in bold changed their count of pairs; hover a cell for the counts. The near-repeat panel\u2019s results are about the original points only.'),
      el('div', { class: 'table-scroll share-scroll' },
        el('table', { class: 'small', id: 'share-cost-pairs' },
          el('thead', null, el('tr', null, el('th', { scope: 'col' }, 'distance \\ days apart'), ...pr.time_labels.map((l) => el('th', { scope: 'col', class: 'n' }, l)))),
          el('tbody', null, ...body))));
  }

  function renderTable() {
    const box = $('share-agg-result');
    box.replaceChildren();
    const r = state.table;
    if (!r) return;
    const t = r.table;
    const shown = t.cells.filter((c) => !c.suppressed && c.count > 0).length;
    const suppressed = t.cells.filter((c) => c.suppressed).length;
    const sh = t.shown;
    const pct = (v) => (v === null || v === undefined ? 'none' : `${Math.round(100 * v)}%`);
    // The audit says what is shown as well as what is hidden: a table that
    // hides everything is safe but useless, and says so.
    const audit = !t.audit.safe
      ? 'a hidden count may still be recoverable: do not publish this table'
      : sh.nothing_shown
        ? 'nothing is shown: no hidden count can be recovered, but this table tells nothing about where the events are'
        : `no hidden count can be recovered from the published totals (single totals, linear combinations, bounds${t.audit.exact ? ', exhaustive whole-number search' : '; exhaustive search skipped: table too large'})`;
    const auditClass = !t.audit.safe || sh.nothing_shown ? 'bad' : sh.mostly_hidden ? 'warn-text' : 'ok';
    const grand = t.lines.find((l) => l.kind === 'grand');
    const dl = el('dl', { class: 'figures', id: 'share-agg-figures' },
      el('dt', null, 'Events counted'), el('dd', null, fmt(r.events_counted)),
      el('dt', null, 'Areas with a count shown'), el('dd', { 'data-key': 'shown' }, fmt(shown)),
      el('dt', null, 'Hidden counts'), el('dd', { 'data-key': 'suppressed' }, `${fmt(suppressed)} (${fmt(t.n_primary)} small, ${fmt(t.n_complementary)} more so no hidden count follows from the totals)`),
      el('dt', null, 'Counts hidden'), el('dd', null, r.counts_hidden_to > 0 ? `1 to ${fmt(r.counts_hidden_to)} (${r.threshold_note})` : 'none'),
      el('dt', null, 'Totals withheld'), el('dd', null, fmt(t.totals_withheld)),
      el('dt', null, 'Grand total shown'), el('dd', null, grand && grand.total !== null ? fmt(grand.total) : 'withheld'),
      el('dt', null, 'Shown'), el('dd', { 'data-key': 'shown-share' },
        `${fmt(sh.cells_with_events_shown)} of ${fmt(sh.cells_with_events)} areas with events (${pct(sh.share_of_cells_with_events_shown)}), holding ${fmt(sh.events_in_shown_cells)} of ${fmt(sh.events_in_cells)} events (${pct(sh.share_of_events_shown)})`),
      el('dt', null, 'Audit'), el('dd', { 'data-key': 'audit', class: auditClass }, audit),
      el('dt', null, 'Rates'), el('dd', null, r.population_source ? `per ${fmt(t.params.rate_per)} of the population (${r.population_source}); not shown for hidden counts or a population under ${fmt(t.params.rate_min_population)}; flagged unreliable below a count of ${fmt(t.params.rate_unreliable_below)}` : 'no population loaded'));
    // A table that hides most of what it counts: the warning goes first,
    // above the figures, where it cannot be missed.
    const [first, ...rest] = t.warnings || [];
    if (sh.mostly_hidden && first) box.append(el('p', { class: 'warn', role: 'alert', id: 'share-agg-hidden-warning' }, first));
    box.append(dl);
    for (const w of sh.mostly_hidden ? rest : t.warnings || []) box.append(el('p', { class: 'warn' }, w));
    const rows = t.cells.filter((c) => c.suppressed || c.count > 0 || t.layout.layout === 'zones');
    const headers = ['Area', 'Count'];
    if (r.population_source) headers.push('Population', 'Rate');
    box.append(el('div', { class: 'table-scroll share-scroll' },
      el('table', { class: 'small', id: 'share-cells' },
        el('thead', null, el('tr', null, ...headers.map((h, i) => el('th', { scope: 'col', class: i > 0 ? 'n' : null }, h)))),
        el('tbody', null, ...rows.slice(0, 2000).map((c) => el('tr', { 'data-suppressed': c.suppressed ? '1' : '0' },
          el('td', null, c.id),
          el('td', { class: 'n' }, c.suppressed ? 'hidden' : fmt(c.count)),
          r.population_source ? el('td', { class: 'n' }, c.population === null ? '—' : fmt(c.population)) : null,
          r.population_source ? el('td', { class: 'n' }, c.rate === null ? '—' : `${fmt(c.rate, 3)}${c.rate_unreliable ? ' (unreliable)' : ''}`) : null))))));
    if (t.layout.layout !== 'zones') box.append(el('p', { class: 'hint' }, 'Areas not listed have a count of 0. Ids are r<row>c<column> of the grid.'));
  }

  // ---------- actions ----------

  async function mask(replace) {
    clearError();
    $('share-remask').hidden = true;
    let result;
    const seed = randomSeed();
    try {
      if (method() === 'ring') {
        result = await call('maskDonut', { r_min_m: value('share-rmin'), r_max_m: value('share-rmax'), law: $('share-law').value, seed, replace });
      } else {
        const against = $('share-against').value;
        const p = { target_k: Math.round(value('share-k')), r_max_m: value('share-kmax'), r_min_m: value('share-kmin'), against, area_factor: value('share-factor'), keep_below_target: $('share-keep-below').checked, seed, replace };
        if (against === 'density') p.density_per_km2 = value('share-density');
        result = await call('maskKAnonymity', p);
      }
    } catch (err) {
      if (err && err.code === 'already_masked') { $('share-remask').hidden = false; return; }
      showError('Could not mask the points', err);
      return;
    }
    state.mask = result;
    state.cost = null;
    renderMask();
    redrawOverlay();
    updateButtons();
    setStatus(`Masked ${fmt(result.n_masked)} of ${fmt(result.n_input)} points.`);
    try {
      state.cost = await call('maskingCost', {});
    } catch (err) {
      showError('Could not compare the masked points with the originals', err);
    }
    renderMask();
  }

  /** A 53-bit seed from the browser's cryptographic generator. It is used
   * once, in the worker, and neither shown nor saved. */
  function randomSeed() {
    const a = new Uint32Array(2);
    crypto.getRandomValues(a);
    return (a[0] & 0x1fffff) * 4294967296 + a[1];
  }

  let zonesBytes = null;
  async function aggregate() {
    clearError();
    const layout = $('share-layout').value;
    const p = { layout, min_count: Math.max(1, Math.round(value('share-min'))), publish_row_column_totals: $('share-totals').checked };
    if (layout === 'zones') {
      if (!zonesBytes) { showError('Could not count per zone', { message: 'choose a zones file (GeoJSON polygons) first' }); return; }
      p.zones = zonesBytes;
    } else {
      p.cell_size_m = value('share-cell');
    }
    let result;
    try {
      result = await call('aggregate', p);
    } catch (err) {
      showError('Could not count per area', err);
      return;
    }
    state.table = result;
    state.classes = makeClasses(result.table.cells);
    renderTable();
    redrawOverlay();
    updateButtons();
    setStatus(`Counted ${fmt(result.events_counted)} events in ${fmt(result.table.cells.length)} areas; ${fmt(result.table.cells.filter((c) => c.suppressed).length)} counts hidden.`);
  }

  /** The date shift asked for (whole days), or null for no dates in point files. */
  function dateShift(what) {
    if (!(what === 'masked_points' || what === 'unmasked_points')) return null;
    const text = $('share-date-shift').value.trim();
    if (text === '') return null;
    const v = Number(text);
    const lim = C.param('exportFile', 'date_shift_days');
    if (!(Number.isInteger(v) && v >= lim.min && v <= lim.max)) throw { message: `the date shift must be a whole number of days from ${fmt(lim.min)} to ${fmt(lim.max)}.` };
    return v;
  }

  function exportOptions(format, dates) {
    const o = { created: new Date().toISOString(), coordinates: $('share-coords').value };
    if (dates) { o.date_shift_days = dates.days; o.date_seed = dates.seed; }
    if (format === 'csv' || format === 'geo_json') o.format = format;
    if (format === 'csv') o.csv_notes = $('share-notes').value;
    if (state.mask && state.table) o.report_holds = $('share-holds').value;
    if (format === 'html' && $('share-risk').checked) o.report_risk = true;
    return o;
  }

  async function preview(what, format) {
    clearError();
    const box = $('share-preview');
    let p;
    let dates = null;
    if (what === 'map_png') {
      if (!state.onlyShared) { showError('Map picture not saved', { message: 'tick "Show only what would be shared" first: the map still shows the original points' }); return; }
      p = {
        content: 'map picture', format: 'png', rows: null, contains_original_coordinates: false, label: null,
        fields: ['the map as drawn now, with only the shared layers', sharedParts().points ? 'masked points' : null, sharedParts().counts ? 'counts per area (hidden counts hatched)' : null,
          areaFromFile() ? 'study area outline (from the boundary file)' : null, 'scale bar, north arrow, legend'].filter(Boolean),
        metadata_keys: [], points_left_out: state.mask ? state.mask.unplaced.length : 0, cautions: state.mask ? state.mask.cautions : state.table.cautions,
      };
    } else {
      try {
        const days = dateShift(what);
        dates = days === null ? null : { days, seed: C.readSeed($('share-date-seed')) };
        p = await call('exportPreview', what, exportOptions(format, dates));
      } catch (err) {
        showError('Could not prepare the file', err);
        return;
      }
    }
    state.pending = { what, format, preview: p, dates };
    const unmasked = !!p.contains_original_coordinates;
    const items = [
      ['Contents', p.content],
      ['Format', String(p.format).replace('geo_json', 'GeoJSON').toUpperCase().replace('GEOJSON', 'GeoJSON')],
      [what === 'report' ? 'Sections' : what === 'map_png' ? 'Drawn' : 'Fields', (p.fields || []).join(', ')],
    ];
    if (p.rows !== null && p.rows !== undefined && what !== 'report') items.push(['Rows / features', fmt(p.rows)]);
    if (p.metadata_keys && p.metadata_keys.length) items.push(['Notes about the file', `${p.metadata_keys.join(', ')}; written in ${p.notes_at || 'the file'}`]);
    const atOriginal = p.points_at_original_location || 0;
    items.push(['Original coordinates', atOriginal > 0
      ? `YES: ${fmt(atOriginal)} of ${fmt(p.rows)} masked points are written at their original location at this precision (compared as written); the file is labelled "unmasked, internal use only". Mask with a larger shift or write fewer decimals to share it.`
      : unmasked ? 'YES: the original locations, labelled "unmasked, internal use only"' : 'none (each written coordinate compared with its original)']);
    if (what === 'masked_points' || what === 'report') items.push(['Points left out (could not be masked)', fmt(p.points_left_out)]);
    if (what !== 'unmasked_points') items.push(['Masking seed', 'not written (with it the shifts could be undone)']);
    if (dates) items.push(['Dates', `each moved by a random whole number of days from \u2212${fmt(dates.days)} to +${fmt(dates.days)} (the seed is not written)`]);
    box.replaceChildren(...[
      el('h3', { id: 'share-preview-title' }, 'What leaves the page'),
      el('dl', { class: 'figures', id: 'share-preview-list' }, ...items.flatMap(([k, v]) => [el('dt', null, k), el('dd', null, v)])),
      el('h4', null, 'Cautions written into the file'),
      el('ul', { class: 'share-preview-cautions' }, ...(p.cautions || []).map((c) => el('li', null, c))),
      unmasked ? el('label', { class: 'check warn share-confirm' }, el('input', { type: 'checkbox', id: 'share-confirm-unmasked' }),
        ' I understand this file holds the original, unmasked locations, is for internal use only and must not be shared.') : null,
      el('div', { class: 'share-actions' },
        el('button', { type: 'button', id: 'share-save', disabled: unmasked }, 'Save the file'),
        el('button', { type: 'button', id: 'share-cancel', class: 'quiet' }, 'Cancel'))].filter(Boolean));
    box.classList.toggle('danger-box', unmasked);
    box.hidden = false;
    if (unmasked) $('share-confirm-unmasked').addEventListener('change', () => { $('share-save').disabled = !$('share-confirm-unmasked').checked; });
    $('share-save').addEventListener('click', act(save));
    $('share-cancel').addEventListener('click', () => { box.hidden = true; state.pending = null; });
    box.scrollIntoView({ block: 'nearest' });
  }

  async function save() {
    const pend = state.pending;
    if (!pend) return;
    const { what, format } = pend;
    try {
      if (what === 'map_png') {
        await saveMapPng();
      } else {
        const o = exportOptions(format, pend.dates);
        if (what === 'unmasked_points' || pend.preview.contains_original_coordinates) {
          if (!$('share-confirm-unmasked') || !$('share-confirm-unmasked').checked) return;
          o.confirm_unmasked = true;
        }
        if (what === 'report') {
          o.map_image = await sharedPicture(1000, 720).then((c) => c.toDataURL('image/png'));
        }
        const f = await call('exportFile', what, o);
        download(new Blob([f.text], { type: `${f.mime};charset=utf-8` }), f.file_name);
        setStatus(`Saved ${f.file_name}.`);
      }
    } catch (err) {
      showError('Could not save the file', err);
      return;
    }
    $('share-preview').hidden = true;
    state.pending = null;
  }

  function download(blob, name) {
    const url = URL.createObjectURL(blob);
    const a = el('a', { href: url, download: name, hidden: true });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 30000);
  }

  /** The on-screen map, only while it shows only the shared layers, plus a legend strip. */
  async function saveMapPng() {
    if (!state.onlyShared || !(state.mask || state.table)) throw { message: 'the map picture can be saved only while the map shows only what would be shared' };
    await overlayOnTop();
    const map = $('map');
    const legend = legendItems();
    const out = document.createElement('canvas');
    const lh = 22;
    out.width = map.width;
    out.height = map.height + lh * legend.length + 16;
    const ctx = out.getContext('2d');
    ctx.fillStyle = '#ffffff';
    ctx.fillRect(0, 0, out.width, out.height);
    ctx.drawImage(map, 0, 0);
    drawLegend(ctx, legend, 12, map.height + 8, lh);
    const blob = await new Promise((resolve, reject) => out.toBlob((b) => (b ? resolve(b) : reject({ message: 'the picture could not be made' })), 'image/png'));
    const name = C.downloadName('shared-map', 'png');
    download(blob, name);
    setStatus(`Saved ${name}.`);
  }

  function drawLegend(ctx, items, x, y, lh) {
    ctx.font = '13px system-ui, "DejaVu Sans", sans-serif';
    ctx.textBaseline = 'middle';
    items.forEach((it, i) => {
      const cy = y + i * lh + lh / 2;
      if (it.kind === 'masked') {
        ctx.beginPath(); ctx.arc(x + 7, cy, 4, 0, 2 * Math.PI);
        ctx.fillStyle = '#fff'; ctx.fill(); ctx.lineWidth = 1.5; ctx.strokeStyle = it.colour; ctx.stroke();
      } else if (it.kind === 'hatch') {
        ctx.fillStyle = hatchPattern(ctx, 1); ctx.fillRect(x, cy - 6, 14, 12);
      } else if (it.kind === 'fill') {
        ctx.fillStyle = it.colour; ctx.fillRect(x, cy - 6, 14, 12);
      } else if (it.kind === 'line') {
        ctx.strokeStyle = it.colour; ctx.lineWidth = 1; ctx.strokeRect(x + 0.5, cy - 5.5, 13, 11);
      }
      ctx.fillStyle = '#1c2430';
      ctx.fillText(it.label, x + 22, cy);
    });
  }

  /** A picture made only from the shared layers (for the report), framed on them. */
  async function sharedPicture(w, h) {
    const layers = state.snap && state.snap.layers;
    let b = [Infinity, Infinity, -Infinity, -Infinity];
    const grow = (x, y) => { b = [Math.min(b[0], x), Math.min(b[1], y), Math.max(b[2], x), Math.max(b[3], y)]; };
    if (areaFromFile() && layers) for (const p of layers.area) for (const ring of p) for (const v of ring) grow(v[0], v[1]);
    const parts = sharedParts();
    if (state.mask && parts.points) for (let i = 0; i + 1 < state.mask.masked.length; i += 2) grow(state.mask.masked[i], state.mask.masked[i + 1]);
    if (state.table && parts.counts) for (const c of state.table.table.cells) if (c.suppressed || c.count > 0) for (const p of c.geometry) for (const v of p[0]) grow(v[0], v[1]);
    const legend = legendItems().filter((it) => it.kind !== 'none');
    const lh = 22;
    const mapH = h - lh * legend.length - 16;
    const c = document.createElement('canvas');
    c.width = w; c.height = h;
    const ctx = c.getContext('2d');
    ctx.fillStyle = '#ffffff';
    ctx.fillRect(0, 0, w, h);
    if (!b.every(Number.isFinite)) return c;
    const pad = 0.05;
    const scale = Math.min((w * (1 - 2 * pad)) / Math.max(b[2] - b[0], 1), (mapH * (1 - 2 * pad)) / Math.max(b[3] - b[1], 1));
    const cx = (b[0] + b[2]) / 2;
    const cy = (b[1] + b[3]) / 2;
    const geo = { toX: (x) => w / 2 + (x - cx) * scale, toY: (y) => mapH / 2 - (y - cy) * scale, k: scale, dpr: 1, W: w, H: mapH };
    ctx.save();
    ctx.beginPath(); ctx.rect(0, 0, w, mapH); ctx.clip();
    drawShared(ctx, geo, true);
    ctx.restore();
    scaleBar(ctx, scale, 14, mapH - 14);
    drawLegend(ctx, legend, 12, mapH + 8, lh);
    return c;
  }

  function scaleBar(ctx, scale, x, y) {
    const raw = 160 / scale;
    const p = Math.pow(10, Math.floor(Math.log10(raw)));
    let nice = p;
    for (const m of [1, 2, 5, 10]) if (m * p <= raw) nice = m * p;
    const len = nice * scale;
    const label = nice >= 1000 ? `${nice / 1000} km` : `${nice} m`;
    ctx.fillStyle = 'rgba(255,255,255,0.85)';
    ctx.fillRect(x - 6, y - 24, len + 14, 32);
    ctx.fillStyle = '#1c2430';
    ctx.fillRect(x, y - 3, len, 4);
    ctx.font = '12px system-ui, "DejaVu Sans", sans-serif';
    ctx.textBaseline = 'alphabetic';
    ctx.fillText(label, x, y - 9);
  }

  // ---------- wiring ----------

  for (const r of document.querySelectorAll('input[name=share-method]')) {
    r.addEventListener('change', () => {
      $('share-ring-fields').hidden = method() !== 'ring';
      $('share-k-fields').hidden = method() !== 'k';
    });
  }
  function densityFields() {
    const density = $('share-against').value === 'density';
    $('share-density').closest('label').hidden = !density;
    $('share-factor').closest('label').hidden = !density;
  }
  $('share-against').addEventListener('change', densityFields);
  $('share-mask').addEventListener('click', act(() => (state.mask ? ($('share-remask').hidden = false) : mask(false))));
  $('share-remask-yes').addEventListener('click', act(() => mask(true)));
  $('share-remask-no').addEventListener('click', () => { $('share-remask').hidden = true; });
  $('share-only').addEventListener('change', () => { updateButtons(); redrawOverlay(); });
  $('share-holds').addEventListener('change', () => { updateButtons(); redrawOverlay(); });
  $('share-aggregate').addEventListener('click', act(aggregate));
  $('share-min').addEventListener('input', thresholdNote);
  $('share-layout').addEventListener('change', () => {
    const zones = $('share-layout').value === 'zones';
    $('share-cell').closest('label').hidden = zones;
    $('share-zones').closest('label').hidden = !zones;
  });
  $('share-zones').closest('label').hidden = true;
  $('share-zones').addEventListener('change', act(async () => {
    const f = $('share-zones').files[0];
    zonesBytes = f ? new Uint8Array(await f.arrayBuffer()) : null;
  }));
  for (const b of document.querySelectorAll('#sharing [data-export]')) {
    const [what, format] = b.dataset.export.split(':');
    b.addEventListener('click', act(() => preview(what, format)));
  }
  thresholdNote();
  updateButtons();

  C.onSnapshot(async (snap) => {
    // New data: the engine dropped the masked copy and the counts with it.
    state.snap = snap;
    state.mask = null;
    state.cost = null;
    state.table = null;
    state.classes = null;
    state.pending = null;
    $('share-preview').hidden = true;
    $('share-remask').hidden = true;
    $('share-only').checked = false;
    renderMask();
    renderTable();
    redrawOverlay();
    updateButtons();
  });

  // The cautions come from the engine (the same text goes into the report).
  (function loadCautions() {
    if (document.body.dataset.ready !== '1') { setTimeout(loadCautions, 200); return; }
    call('sharingCautions').then(renderCautions, () => setTimeout(loadCautions, 1000));
  })();
}
