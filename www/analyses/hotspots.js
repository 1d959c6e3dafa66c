/* "Where are the hotspots?": three answers to one question.
 *   1. a kernel intensity surface (how dense, everywhere), with isopleths;
 *   2. density clusters (DBSCAN: which events belong together);
 *   3. a scan for excess (Kulldorff: is any circle's excess more than chance?).
 * Every number comes from the engine (src/web/hotspots.rs); this file asks,
 * draws and explains. Uses only the panel API it is given (www/README.md). */

/** Adds the panel to the page; C is the page's panel API (www/panel-api.js). */
/** Next circles of the scan with a p-value at or above this are not listed
 * (they are what chance gives anyway); the engine's result keeps them all. */
const NEXT_P_MAX = 0.5;

export function mountHotspots(C) {
  const { el, fmt, fmtMetres } = C;

  /* Sequential ramp made for this tool: six steps whose lightness falls
   * evenly (CIELAB L* ≈ 92 → 22) while the hue turns from straw through
   * clay to a deep plum. The order is carried by lightness alone, so it
   * reads the same with any colour-vision deficiency and in greyscale; it
   * also stays apart from the map's blue event squares. */
  const RAMP = ['#f4ecc2', '#e8c886', '#d59a5c', '#b26847', '#81404b', '#4b2340'];
  // Opacity grows with the class, so thin background density leaves the
  // study area and the events readable and the hotspots stand out.
  const RAMP_ALPHA = [0.22, 0.36, 0.5, 0.6, 0.68, 0.75];
  const ISO_STYLE = { 0.5: [], 0.75: [7, 4], 0.95: [2, 3] };
  const HULL = '#0f5c5a';
  const SCAN_MAIN = '#101010';
  const SCAN_OTHER = '#2b2b2b';

  const state = {
    info: null,
    surface: null, // {meta, image (canvas), breaks}
    showSurface: true,
    clusters: null,
    kdist: null,
    scan: null,
    job: null,
  };

  const section = C.addSection('hotspots', 'Where are the hotspots?',
    'Three different answers. A density surface shows where events are thick on the ground; density clusters say which events sit together; the scan asks whether an excess in some circle is more than chance. None of them says why.');
  const root = section.closest('section');

  // ---------- small helpers ----------

  // A missing value (null: e.g. no longitude for planar data) is not a number, not 0.
  const num = (v) => (v === null || v === undefined ? NaN : Number(v));
  function field(label, control, hint) {
    // The label names the field's own input even when it sits in a wrapper.
    const inner = control.matches('input, select') ? control : control.querySelector('input, select');
    const id = inner ? inner.id : null;
    return el('div', { class: 'hs-field' }, el('label', { for: id }, label), control, hint ? el('span', { class: 'hint' }, hint) : null);
  }
  /** A field on a row of its own, so a long choice is not cut off. */
  function wide(node) {
    node.classList.add('hs-wide');
    return node;
  }
  function input(id, attrs) {
    return el('input', { id, ...attrs });
  }
  function select(id, options, value) {
    const s = el('select', { id });
    for (const [v, t] of options) s.append(el('option', { value: v }, t));
    s.value = value;
    return s;
  }
  function niceRound(v) {
    if (!(v > 0)) return v;
    const p = Math.pow(10, Math.floor(Math.log10(v)) - 1);
    return Math.round(v / p) * p;
  }
  function place(x, y, lon, lat) {
    if (Number.isFinite(num(lon)) && Number.isFinite(num(lat))) return `${num(lon).toFixed(5)}°, ${num(lat).toFixed(5)}°`;
    return `x ${fmt(Math.round(num(x)))}, y ${fmt(Math.round(num(y)))} m`;
  }
  function fmtP(p, nSim) {
    const floor = 1 / (nSim + 1);
    if (p <= floor + 1e-12) return `${fmt(p, 3)} (the smallest possible with ${fmt(nSim)} chance runs)`;
    return fmt(p, 3);
  }
  function setBusy(node, busy) {
    node.dataset.state = busy;
  }

  // ---------- 1. intensity surface ----------

  const kernelSel = select('hs-kernel', [['gaussian', 'Gaussian (bell-shaped)'], ['quartic', 'quartic (ends at a radius)']], 'gaussian');
  const kernelHint = el('span', { class: 'hint', id: 'hs-kernel-hint' });
  const methodSel = select('hs-method', [
    ['normal_reference', 'rule of thumb'],
    ['likelihood_cv', 'likelihood cross-validation'],
    ['diggle_mse', 'mean-square-error criterion'],
    ['fixed', 'fixed, in metres'],
  ], 'normal_reference');
  const fixedIn = input('hs-fixed', { type: 'number', min: '1', step: 'any', value: '300', disabled: true, 'aria-label': 'Fixed bandwidth in metres' });
  const cellsSel = select('hs-cells', [['256', '256 (quick)'], ['512', '512'], ['1024', '1024 (fine, slower)']], '256');
  const edgeBox = input('hs-edge', { type: 'checkbox', checked: true });
  const weightBox = input('hs-weights', { type: 'checkbox', disabled: true });
  const surfaceBtn = el('button', { type: 'button', id: 'hs-surface-run', disabled: true }, 'Draw the surface');
  const showBox = input('hs-surface-show', { type: 'checkbox', checked: true, disabled: true });
  const exportBtn = el('button', { type: 'button', id: 'hs-export', class: 'quiet', disabled: true }, 'Download isopleths (GeoJSON)');
  const surfaceOut = el('div', { class: 'hs-out', id: 'hs-surface-out', 'aria-live': 'polite' });

  function kernelText() {
    kernelHint.textContent = kernelSel.value === 'gaussian'
      ? 'Bandwidth = the spread (standard deviation) of each event\u2019s bell in every direction; its influence fades but never quite ends.'
      : 'Bandwidth = the radius of each event\u2019s mound; nothing beyond it. A quartic radius of 2.83 × a Gaussian spread smooths about as much.';
  }
  kernelText();
  kernelSel.addEventListener('change', kernelText);
  methodSel.addEventListener('change', () => { fixedIn.disabled = methodSel.value !== 'fixed'; });
  showBox.addEventListener('change', () => { state.showSurface = showBox.checked; drawOverlays(); });

  const part1 = el('div', { class: 'hs-part', id: 'hs-surface' },
    el('h3', null, '1. How dense is it, everywhere? (intensity surface)'),
    el('p', { class: 'hint' }, 'Each event is spread into a small mound and the mounds are added up: the result is events per km² at every place. The bandwidth sets the mound\u2019s size: small bandwidths show every little group (and can point at single addresses), large ones blur real hotspots into the background.'),
    el('div', { class: 'hs-form' },
      field('Kernel', kernelSel),
      kernelHint,
      wide(field('Bandwidth', el('span', { class: 'hs-inline' }, methodSel, fixedIn, el('span', { class: 'hint' }, 'm')))),
      field('Grid cells', cellsSel, 'along the area\u2019s longer side; more when the bandwidth is small'),
      el('label', { class: 'check' }, edgeBox, ' Correct for the edge of the study area (Jones–Diggle: every event keeps its whole mound inside)'),
      el('label', { class: 'check', id: 'hs-weights-label' }, weightBox, ' Weight each event by its count column')),
    el('div', { class: 'hs-buttons' }, surfaceBtn, el('label', { class: 'check' }, showBox, ' Show on the map'), exportBtn),
    surfaceOut);

  function classBreaks(max) {
    // Six classes on a square-root scale of the peak: the lowest shaded
    // class starts at 1/36 of the peak; below that nothing is shaded.
    const b = [];
    for (let i = 1; i <= 5; i++) b.push(niceRound(max * (i / 6) * (i / 6)));
    return b;
  }

  function surfaceImage(meta, breaks) {
    const nx = num(meta.nx), ny = num(meta.ny);
    const img = document.createElement('canvas');
    img.width = nx;
    img.height = ny;
    const ctx = img.getContext('2d');
    const data = ctx.createImageData(nx, ny);
    const rgb = RAMP.map((h) => [parseInt(h.slice(1, 3), 16), parseInt(h.slice(3, 5), 16), parseInt(h.slice(5, 7), 16)]);
    const alpha = RAMP_ALPHA.map((a) => Math.round(255 * a));
    const v = meta.values, m = meta.mask;
    for (let j = 0; j < ny; j++) {
      const row = (ny - 1 - j) * nx; // row 0 of the grid is the south edge
      for (let i = 0; i < nx; i++) {
        const k = j * nx + i;
        if (!m[k]) continue;
        const x = v[k];
        if (!(x >= breaks[0] * 0.5)) continue;
        let c = 0;
        while (c < breaks.length && x >= breaks[c]) c++;
        const o = (row + i) * 4;
        const col = rgb[c];
        data.data[o] = col[0]; data.data[o + 1] = col[1]; data.data[o + 2] = col[2]; data.data[o + 3] = alpha[c];
      }
    }
    ctx.putImageData(data, 0, 0);
    return img;
  }

  function renderSurface(meta) {
    const breaks = classBreaks(num(meta.max_per_km2));
    state.surface = { meta, breaks, image: surfaceImage(meta, breaks) };
    surfaceOut.replaceChildren();
    const dl = el('dl', { class: 'figures' });
    const add = (t, v, key) => dl.append(el('dt', null, t), el('dd', key ? { 'data-key': key } : null, v));
    const h = num(meta.bandwidth_m);
    const kind = meta.kernel === 'gaussian' ? 'spread (SD) of each bell' : 'radius of each mound';
    add('Bandwidth', `${fmtMetres(h)} (${kind})`, 'bandwidth');
    add('Chosen by', meta.method_text, 'method');
    if (meta.reference_m !== null && meta.reference_m !== undefined && meta.method !== 'normal_reference') add('Rule of thumb would give', fmtMetres(meta.reference_m));
    if (meta.bandwidth_note) add('Note', meta.bandwidth_note);
    add('Events', meta.weighted ? `${fmt(meta.n_events)} (weighted total ${fmt(meta.total_weight)})` : fmt(meta.n_events));
    add('Surface holds', `${fmt(meta.integral_events, 5)} events over ${fmt(meta.area_km2, 4)} km²`, 'integral');
    add('Peak', `${fmt(meta.max_per_km2, 3)} events per km²`, 'peak');
    add('Grid', `${fmt(meta.nx)} × ${fmt(meta.ny)} cells of ${fmtMetres(meta.cell_m)}`);
    add('Edge correction', meta.edge === 'none' ? 'none (the surface sags near the boundary)' : C.term('jones_diggle', 'Jones–Diggle'));
    surfaceOut.append(dl);
    const priv = meta.privacy;
    if (priv && priv.warning) {
      surfaceOut.append(el('p', { class: 'warn', id: 'hs-privacy' }, el('strong', null, 'Privacy: '), priv.warning));
    } else if (priv) {
      surfaceOut.append(el('p', { class: 'hint', id: 'hs-privacy-ok' }, `Every event has at least ${priv.threshold - 1} others within ${fmtMetres(priv.radius_m)} (twice the kernel\u2019s spread), so no mound stands for one event alone. Check your own rules before sharing.`));
    }
    for (const n of meta.notes || []) surfaceOut.append(el('p', { class: 'warn' }, n));
    // Legend in real units.
    const legend = el('ul', { class: 'hs-ramp', id: 'hs-ramp', 'aria-label': 'Surface colours, events per km²' });
    const lo = breaks[0] * 0.5;
    const edges = [lo, ...breaks, num(meta.max_per_km2)];
    for (let c = 0; c < RAMP.length; c++) {
      const sw = el('span', { class: 'hs-sw', 'aria-hidden': 'true' });
      sw.style.background = RAMP[c];
      const text = c === RAMP.length - 1 ? `${fmt(edges[c], 3)} to ${fmt(edges[c + 1], 3)}` : `${fmt(edges[c], 3)} to ${fmt(edges[c + 1], 3)}`;
      legend.append(el('li', null, sw, text));
    }
    surfaceOut.append(el('p', { class: 'hs-legend-title' }, 'Events per km² (unshaded: below ', fmt(lo, 3), ')'), legend);
    // Isopleths.
    const iso = Array.from(meta.isopleths || []);
    if (iso.length) {
      const tb = el('tbody');
      for (const c of iso) {
        tb.append(el('tr', null, el('td', null, `${Math.round(num(c.percent) * 100)} %`), el('td', { class: 'n' }, fmt(c.level_per_km2, 3)), el('td', { class: 'n' }, fmt(c.area_km2, 3))));
      }
      surfaceOut.append(el('p', { class: 'hint' }, 'Isopleths: the smallest areas that hold 50, 75 and 95 % of the surface\u2019s events (lines on the map: solid, dashed, dotted).'),
        el('table', { class: 'small', id: 'hs-iso-table' },
          el('thead', null, el('tr', null, el('th', { scope: 'col' }, 'Share'), el('th', { scope: 'col', class: 'n' }, 'Line at (per km²)'), el('th', { scope: 'col', class: 'n' }, 'Area (km²)'))), tb));
    }
    showBox.disabled = false;
    exportBtn.disabled = iso.length === 0;
    drawOverlays();
  }

  surfaceBtn.addEventListener('click', C.act(async () => {
    C.clearError();
    const params = {
      kernel: kernelSel.value,
      method: methodSel.value,
      edge: edgeBox.checked ? 'jones_diggle' : 'none',
      use_weights: weightBox.checked && !weightBox.disabled,
      cells: Number(cellsSel.value),
      isopleths: [0.5, 0.75, 0.95],
    };
    if (methodSel.value === 'fixed') {
      const v = Number(fixedIn.value);
      if (!(v > 0)) { C.showError('Cannot draw the surface', { message: 'a fixed bandwidth must be a positive number of metres.' }); return; }
      params.fixed_m = v;
    }
    C.setStatus('Drawing the intensity surface…');
    setBusy(part1, 'running');
    try {
      const meta = await C.call('intensitySurface', params);
      renderSurface(meta);
      setBusy(part1, 'done');
      C.setStatus(`Intensity surface drawn: bandwidth ${fmtMetres(meta.bandwidth_m)}.`);
    } catch (err) {
      setBusy(part1, 'error');
      if (err && (err.code === 'engine_stopped' || err.code === 'cancelled')) return;
      state.surface = null;
      drawOverlays();
      const why = /no finite optimum/i.test(String(err && err.message)) ? ' The criterion keeps improving as the bandwidth grows, as it does when events are spread at random: there is no best bandwidth to report. Choose one yourself (fixed) or use another method.' : '';
      surfaceOut.replaceChildren(el('p', { class: 'warn', id: 'hs-surface-error' }, `${(err && err.message) || 'The surface could not be drawn.'}${why}`));
      C.setStatus('No surface drawn.');
    }
  }));

  exportBtn.addEventListener('click', C.act(async () => {
    try {
      const text = await C.call('isoplethsGeoJson', [0.5, 0.75, 0.95]);
      const blob = new Blob([text], { type: 'application/geo+json' });
      const url = URL.createObjectURL(blob);
      const name = C.downloadName('isopleths', 'geojson');
      const a = el('a', { href: url, download: name });
      document.body.append(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(url), 10000);
      C.setStatus(`Isopleths saved as ${name} (made on this computer; nothing was sent).`);
    } catch (err) {
      C.showError('Could not export the isopleths', err);
    }
  }));

  // ---------- 2. density clusters ----------

  const minIn = input('hs-min', { type: 'number', value: '8', 'data-param': 'kDistance.min_samples' });
  const epsIn = input('hs-eps', { type: 'number', min: '1', step: 'any', placeholder: 'see chart' });
  const kdistBtn = el('button', { type: 'button', id: 'hs-kdist-run', class: 'quiet', disabled: true }, 'Show the distance chart');
  const knee = el('button', { type: 'button', id: 'hs-use-knee', class: 'linklike', hidden: true }, '');
  const dbBtn = el('button', { type: 'button', id: 'hs-dbscan-run', disabled: true }, 'Find clusters');
  const chart = el('canvas', { id: 'hs-kdist-chart', width: '560', height: '260', role: 'img', 'aria-label': 'Sorted distance to the k-th nearest event', hidden: true });
  const dbOut = el('div', { class: 'hs-out', id: 'hs-dbscan-out', 'aria-live': 'polite' });

  const part2 = el('div', { class: 'hs-part', id: 'hs-dbscan' },
    el('h3', null, '2. Which events sit together? (density clusters, DBSCAN)'),
    el('p', { class: 'hint' }, 'An event with at least "min points" events (itself included) within "reach" is a core event; core events within reach of each other form one cluster, and events within reach of a core join it. Everything else is noise. Method of Ester, Kriegel, Sander & Xu (1996).'),
    el('div', { class: 'hs-form' },
      field('Min points', minIn),
      field(C.term('eps', 'Reach (eps)'), el('span', { class: 'hs-inline' }, epsIn, el('span', { class: 'hint' }, 'm')))),
    el('div', { class: 'hs-buttons' }, kdistBtn, knee, dbBtn),
    chart,
    el('p', { class: 'hint', id: 'hs-kdist-help', hidden: true }, 'Each event\u2019s distance to its (min points − 1)-th nearest neighbour, largest first. Where the curve bends, isolated events give way to grouped ones: a reach near the bend is a starting point, not an answer.'),
    dbOut);

  kdistBtn.addEventListener('click', C.act(async () => {
    const k = Math.round(Number(minIn.value));
    if (!(k >= 2)) { C.showError('Cannot draw the chart', { message: 'min points must be 2 or more.' }); return; }
    try {
      const kd = await C.call('kDistance', k);
      state.kdist = kd;
      drawChart();
      const e = kd.knee_eps_m;
      if (Number.isFinite(num(e))) {
        knee.hidden = false;
        knee.textContent = `Use the bend: ${fmtMetres(e)}`;
        knee.title = 'Bend found by the Kneedle method (Satopää et al. 2011) on the log of these distances: where the curve reaches the background spacing. A starting value; try values around it.';
        if (!epsIn.value) epsIn.value = String(Math.round(num(e)));
      }
    } catch (err) {
      C.showError('Could not compute the distance chart', err);
    }
  }));
  knee.addEventListener('click', () => {
    if (state.kdist && Number.isFinite(num(state.kdist.knee_eps_m))) {
      epsIn.value = String(Math.round(num(state.kdist.knee_eps_m)));
      drawChart();
    }
  });
  epsIn.addEventListener('change', () => { if (state.kdist) drawChart(); });

  function drawChart() {
    if (!state.kdist) return;
    chart.hidden = false;
    $('hs-kdist-help').hidden = false;
    const eps = Number(epsIn.value);
    // As many canvas pixels as screen pixels; the engine scales the drawing.
    const canvas = $('hs-kdist-chart');
    const dpr = Math.min(4, Math.max(1, window.devicePixelRatio || 1));
    canvas.width = Math.round(560 * dpr);
    canvas.height = Math.round(260 * dpr);
    canvas.style.width = '560px';
    canvas.style.height = '260px';
    try {
      C.engine().drawKDistanceChart('hs-kdist-chart', {
        scale: dpr,
        min_samples: num(state.kdist.min_samples),
        sorted_desc_m: Array.from(state.kdist.sorted_desc_m),
        knee_index: state.kdist.knee_index,
        knee_eps_m: state.kdist.knee_eps_m,
        eps_m: eps > 0 ? eps : null,
      });
    } catch (err) {
      C.showError('Could not draw the distance chart', err);
    }
  }

  function $(id) { return document.getElementById(id); }

  dbBtn.addEventListener('click', C.act(async () => {
    C.clearError();
    const eps = Number(epsIn.value);
    const k = Math.round(Number(minIn.value));
    if (!(eps > 0)) { C.showError('Cannot look for clusters', { message: 'give the reach in metres (the distance chart suggests one).' }); return; }
    if (!(k >= 1)) { C.showError('Cannot look for clusters', { message: 'min points must be 1 or more.' }); return; }
    setBusy(part2, 'running');
    try {
      const r = await C.call('dbscan', { eps_m: eps, min_samples: k });
      state.clusters = r;
      renderClusters(r);
      setBusy(part2, 'done');
      C.setStatus(`${C.plural(r.n_clusters, 'cluster', 'clusters')} found; ${fmt(r.noise)} events are noise.`);
    } catch (err) {
      setBusy(part2, 'error');
      if (err && err.code !== 'engine_stopped') C.showError('Could not look for clusters', err);
    }
  }));

  function renderClusters(r) {
    dbOut.replaceChildren();
    dbOut.append(el('p', { id: 'hs-dbscan-summary' },
      el('strong', null, C.plural(r.n_clusters, 'cluster', 'clusters')), ` with reach ${fmtMetres(r.eps_m)} and ${fmt(r.min_samples)} min points; `,
      el('strong', null, fmt(r.noise)), ' events are noise (in no cluster).'));
    const tb = el('tbody');
    const rows = Array.from(r.clusters || []);
    rows.sort((a, b) => num(b.members) - num(a.members));
    for (const c of rows.slice(0, 200)) {
      tb.append(el('tr', null,
        el('td', { class: 'n' }, fmt(num(c.id) + 1)),
        el('td', { class: 'n' }, fmt(c.members)),
        el('td', null, place(c.centre_x, c.centre_y, c.centre_lon, c.centre_lat)),
        el('td', { class: 'n' }, fmt(c.hull_area_km2, 3)),
        el('td', { class: 'n' }, c.density_per_km2 === null || c.density_per_km2 === undefined ? '—' : fmt(c.density_per_km2, 3))));
    }
    if (rows.length) {
      dbOut.append(el('div', { class: 'table-scroll hs-table' }, el('table', { class: 'small', id: 'hs-cluster-table' },
        el('thead', null, el('tr', null,
          el('th', { scope: 'col', class: 'n' }, 'Cluster'), el('th', { scope: 'col', class: 'n' }, 'Events'),
          el('th', { scope: 'col' }, 'Centre (mean of members)'), el('th', { scope: 'col', class: 'n' }, 'Hull area (km²)'),
          el('th', { scope: 'col', class: 'n' }, 'Events per km² of hull'))), tb)));
      if (rows.length > 200) dbOut.append(el('p', { class: 'hint' }, `Largest 200 of ${fmt(rows.length)} clusters shown.`));
    }
    dbOut.append(el('p', { class: 'hint' }, 'Border events (within reach of a core event but not core themselves) that could join two clusters go to the cluster grown first, that is the one whose first core event comes earliest in the file, as scikit-learn does; they are never moved afterwards. So a border event\u2019s cluster can depend on row order; core events and noise do not.'));
    drawOverlays();
  }

  // ---------- 3. scan for excess ----------

  const modelText = el('p', { id: 'hs-scan-model', class: 'hint' });
  const shareIn = input('hs-share', { type: 'number', step: 'any', 'data-param': 'scanStart.max_share', 'data-param-scale': '100' });
  const simIn = input('hs-sims', { type: 'number', 'data-param': 'scanStart.n_sim' });
  const seedIn = input('hs-seed', { type: 'number', min: '0', step: '1' });
  // Where circles are centred: every place (exact, slower with many places)
  // or the cells of a grid; automatic picks from the number of places.
  const centresIn = select('hs-scan-centres', [
    ['auto', 'automatic: every place when there are not too many, else a grid'],
    ['events', 'at every place (exact)'],
    ['grid', 'at the cells of a grid (faster)'],
  ], 'auto');
  const seedBtn = el('button', { type: 'button', class: 'linklike', id: 'hs-new-seed' }, 'new seed');
  const scanBtn = el('button', { type: 'button', id: 'hs-scan-run', disabled: true }, 'Run the scan');
  const cancelBtn = el('button', { type: 'button', id: 'hs-scan-cancel', class: 'quiet', disabled: true }, 'Cancel');
  const bar = el('progress', { id: 'hs-scan-progress', max: '1', value: '0', hidden: true });
  const barText = el('span', { class: 'hint', id: 'hs-scan-progress-text' });
  const scanOut = el('div', { class: 'hs-out', id: 'hs-scan-out', 'aria-live': 'polite' });
  // A long scan asks first (the engine times a few chance runs when it
  // starts), with the faster settings and what each would take.
  const askText = el('p', { id: 'hs-scan-estimate-text' });
  const askList = el('ul', { id: 'hs-scan-faster', class: 'faster' });
  const askGo = el('button', { type: 'button', id: 'hs-scan-estimate-go' }, 'Run it');
  const askStop = el('button', { type: 'button', id: 'hs-scan-estimate-stop', class: 'quiet' }, 'Stop and change the settings');
  const askBox = el('div', { id: 'hs-scan-estimate', class: 'estimate', role: 'alert', hidden: true },
    askText,
    el('p', { class: 'hint' }, 'Faster: fewer chance runs (199 or 99 give a rougher p-value), or a smaller biggest circle. A button below sets that field; then press Run the scan.'),
    askList,
    el('div', { class: 'buttons' }, askGo, askStop));

  function freshSeed() {
    const a = new Uint32Array(1);
    crypto.getRandomValues(a);
    seedIn.value = String(a[0]);
  }
  freshSeed();
  seedBtn.addEventListener('click', freshSeed);

  const part3 = el('div', { class: 'hs-part', id: 'hs-scan' },
    el('h3', null, '3. Is any excess more than chance? (scan, Kulldorff 1997)'),
    el('p', { class: 'hint' }, 'Circles of every size up to a limit are centred across the study area; for each, the events inside are compared with those expected. The circle with the strongest excess is then held against the same search repeated on patterns made by chance alone (chance runs). The test is the circular scan statistic of Kulldorff (1997); its log-likelihood ratio measures how strong an excess is.'),
    modelText,
    el('div', { class: 'hs-form' },
      field('Biggest circle may hold', el('span', { class: 'hs-inline' }, shareIn, el('span', { class: 'hint' }, '% of the people at risk (of the area without a population file)'))),
      field('Chance runs', simIn, '999 is usual; each is a full search on a chance pattern'),
      wide(field('Circles centred', centresIn, 'Every place is exact; a grid is quicker with many places. The time is estimated before the chance runs start.')),
      field('Seed', el('span', { class: 'hs-inline' }, seedIn, seedBtn), 'The same seed and settings give the same answer.')),
    el('div', { class: 'hs-buttons' }, scanBtn, cancelBtn, bar, barText),
    askBox,
    scanOut,
    el('p', { class: 'hs-caution' }, el('strong', null, 'A cluster is not a cause. '), 'A significant circle says the excess is unlikely to be chance under the model; it does not say why. Differences in who is counted, where people live, how cases are reported, or a wrong population can all make one. The circle\u2019s edge is the search\u2019s shape, not the outbreak\u2019s.'));

  function renderModel() {
    const info = state.info;
    if (!info) { modelText.textContent = ''; return; }
    // The engine picks the model from what is loaded (hotspotsInfo.scan_model).
    const model = info.scan_model || (info.has_controls ? 'bernoulli' : 'poisson');
    modelText.dataset.model = model;
    // Against area every circle needs cells (each with its area).
    const atPlaces = centresIn.querySelector('option[value="events"]');
    atPlaces.disabled = model === 'poisson';
    if (atPlaces.disabled && centresIn.value === 'events') centresIn.value = 'auto';
    modelText.replaceChildren(...(model === 'poisson_population'
      ? ['Model: cases against the population counts (', C.term('poisson_population', 'Poisson'), '). The population file gives a number of people at each point; a circle is expected to hold the cases\u2019 share of the people in it. Each case is counted at its nearest population point, and circles are centred at the population points.']
      : model === 'bernoulli'
        ? ['Model: cases against controls (', C.term('bernoulli', 'Bernoulli'), '). Expected counts come from the controls in each circle (one row of the population file is one person; map a count column to give people per point).']
        : ['Model: events against area (', C.term('poisson', 'Poisson'), '). With no population file every km² is assumed to hold the same risk, so a crowded district looks like an excess. Load a population file to compare with where people are.']));
  }

  scanBtn.addEventListener('click', () => runScan());
  askGo.addEventListener('click', () => {
    askBox.hidden = true;
    if (state.job) state.job.resume();
  });
  askStop.addEventListener('click', () => {
    askBox.hidden = true;
    if (state.job) state.job.cancel();
  });
  cancelBtn.addEventListener('click', () => {
    askBox.hidden = true;
    if (state.job) {
      state.job.cancel();
      barText.textContent = 'Cancelling…';
    }
  });

  async function runScan() {
    if (state.job) return;
    C.clearError();
    const share = Number(shareIn.value);
    const nSim = Math.round(Number(simIn.value));
    const seed = Number(seedIn.value);
    const lim = (n) => C.param('scanStart', n);
    const maxPct = lim('max_share').max * 100;
    const [simLo, simHi] = [lim('n_sim').min, lim('n_sim').max];
    if (!(share > 0 && share <= maxPct)) { C.showError('Cannot run the scan', { message: `the largest circle must hold more than 0 and at most ${maxPct} % of the population.` }); return; }
    if (!(nSim >= simLo && nSim <= simHi)) { C.showError('Cannot run the scan', { message: `chance runs must be from ${fmt(simLo)} to ${fmt(simHi)} (999 is usual).` }); return; }
    if (!(Number.isInteger(seed) && seed >= 0 && seed <= lim('seed').max)) { C.showError('Cannot run the scan', { message: 'the seed must be a whole number, 0 or more.' }); return; }
    const params = { max_share: share / 100, n_sim: nSim, seed, centres: centresIn.value };
    scanBtn.disabled = true;
    cancelBtn.disabled = false;
    bar.hidden = false;
    bar.value = 0;
    barText.textContent = 'Setting up the circles…';
    setBusy(part3, 'running');
    state.scan = null;
    drawOverlays();
    scanOut.replaceChildren();
    const t0 = performance.now();
    let t1 = null; // when the chance runs began (after any question)
    let perRun = NaN; // ms per chance run, measured when the scan started
    let workers = 1; // the chance runs are spread over this many workers
    // Chance run j is the same on any worker, so the result equals one worker's.
    // Batches and pieces of whole eights: one pass over the circles of
    // cases against controls serves eight chance runs.
    const parallel = { share: 'scanShare', helperStart: 'scanHelperStart', simulate: 'scanSimulate', add: 'scanAdd' };
    const job = C.runJob({ start: 'scanStart', step: 'scanStep', finish: 'scanFinish', params, confirm_above_ms: C.longRunMs, parallel, batchMultiple: 8, startProgress: true }, (p) => {
      if (state.job !== job) return;
      if (typeof p.fraction === 'number' && p.total === undefined) {
        // The circles being built (long with many places).
        bar.value = Math.min(1, p.fraction);
        barText.textContent = `Setting up the circles\u2026 ${Math.round(Math.min(1, p.fraction) * 100)} %`;
        return;
      }
      const done = num(p.done), total = num(p.total);
      if (p.started && p.started.cost) {
        perRun = num(p.started.cost.replicate_ms);
        workers = Math.max(1, num(p.workers) || 1);
      }
      if (p.waiting) {
        // estimate_ms is already shared out over the workers; the faster
        // settings' times are for one worker.
        askText.textContent = `The ${fmt(total)} chance runs will take ${C.fmtDuration(num(p.estimate_ms))} ` +
          `(one took ${fmt(perRun, 2)} ms: ${fmt(num(p.started.n_windows))} circles over ${fmt(num(p.started.n_regions))} places).`;
        askList.replaceChildren(...Array.from(p.started.cost.faster || []).map((f) => {
          const b = el('button', { type: 'button', class: 'quiet', id: `hs-faster-${f.option}-${String(f.number).replace('.', '_')}`, 'data-option': f.option }, `Use ${f.label}`);
          b.addEventListener('click', () => {
            if (f.option === 'n_sim') simIn.value = String(f.number);
            else shareIn.value = String(Math.round(num(f.number) * 1000) / 10);
            askBox.hidden = true;
            job.note = `Set to ${f.label}: the chance runs should take ${C.fmtDuration(num(f.run_ms) / workers)}. Press Run the scan.`;
            job.cancel();
          });
          return el('li', null, b, ` \u2014 the chance runs: ${C.fmtDuration(num(f.run_ms) / workers)}`);
        }));
        askBox.hidden = false;
        barText.textContent = 'Waiting for your answer\u2026';
        return;
      }
      askBox.hidden = true;
      const now = performance.now();
      if (t1 === null) t1 = { at: now, done };
      bar.value = total > 0 ? done / total : 0;
      // Time left: from the runs done since they began, or at first from
      // the measured time of one run.
      const rate = done > t1.done && now - t1.at > 1500 ? (now - t1.at) / (done - t1.done) : perRun / workers;
      const left = rate * (total - done);
      barText.textContent = `${fmt(done)} of ${fmt(total)} chance runs${Number.isFinite(left) && left >= 1000 ? ` \u00b7 about ${C.fmtDuration(left).replace(/^about /, '')} left` : ''}`;
    });
    state.job = job;
    try {
      const r = await job.promise;
      if (state.job !== job) return;
      state.scan = r;
      renderScan(r);
      setBusy(part3, 'done');
      barText.textContent = `Done in ${fmt((performance.now() - t0) / 1000, 3)} s.`;
      C.setStatus(`Scan finished: p = ${fmt(r.p_value, 3)} for the strongest circle.`);
    } catch (err) {
      if (state.job !== job) return;
      askBox.hidden = true;
      if (err && err.code === 'cancelled') {
        setBusy(part3, 'cancelled');
        barText.textContent = job.note || 'Cancelled; nothing was kept.';
        C.setStatus(job.note ? 'Scan settings changed.' : 'Scan cancelled.');
      } else {
        setBusy(part3, 'error');
        barText.textContent = '';
        if (!err || err.code !== 'engine_stopped') C.showError('The scan could not run', err);
      }
    } finally {
      if (state.job === job) {
        state.job = null;
        scanBtn.disabled = !state.info;
        cancelBtn.disabled = true;
        bar.hidden = true;
      }
    }
  }

  function renderScan(r) {
    scanOut.replaceChildren();
    const nSim = num(r.n_sim);
    const clusters = Array.from(r.clusters || []);
    const dl = el('dl', { class: 'figures' });
    const add = (t, v, key) => dl.append(el('dt', null, t), el('dd', key ? { 'data-key': key } : null, v));
    add('Model', r.model_text);
    add('Regions and circles', `${fmt(r.n_regions)} ${r.centres === 'grid' ? `grid cells of ${fmtMetres(r.cell_m)}` : (r.model === 'poisson_population' ? 'population points' : 'locations')}, ${fmt(r.n_windows)} circles`);
    if (r.model === 'poisson_population') {
      add('People counted', fmt(r.total_population), 'scan-people');
      add('Cases to their population point', `at most ${fmtMetres(r.case_to_population_max_m)} (each case is counted at its nearest point with people; far more than the points' spacing means the population file misses where cases are)`, 'scan-reach');
    }
    add('Strongest excess', clusters.length ? el('span', null, `strength ${fmt(r.statistic, 4)} (`, C.term('llr', 'log-likelihood ratio'), `), p = ${fmtP(num(r.p_value), nSim)}`) : 'no circle holds more than expected', 'scan-p');
    add('Chance runs, seed', `${fmt(nSim)}, seed ${String(r.seed)}`, 'scan-seed');
    scanOut.append(dl);
    if (!clusters.length) return;
    // Next circles are listed only when they could matter: at least two
    // events inside and a p-value below NEXT_P_MAX (the engine returns all).
    const shown = clusters.filter((c, i) => i === 0 || (num(c.observed) >= 2 && num(c.p_value) < NEXT_P_MAX));
    const left = clusters.length - shown.length;
    const tb = el('tbody');
    for (const c of shown) {
      tb.append(el('tr', { class: num(c.p_value) < 0.05 ? 'sig' : null },
        el('td', null, num(c.rank) === 0 ? 'strongest' : `next ${num(c.rank)}`),
        el('td', null, place(c.centre_x, c.centre_y, c.centre_lon, c.centre_lat)),
        el('td', { class: 'n' }, fmtMetres(c.radius_m)),
        el('td', { class: 'n' }, fmt(c.observed)),
        el('td', { class: 'n' }, fmt(c.expected, 3)),
        el('td', { class: 'n' }, fmt(c.relative_risk, 3)),
        el('td', { class: 'n' }, fmt(c.p_value, 3))));
    }
    scanOut.append(el('div', { class: 'table-scroll hs-table' }, el('table', { class: 'small', id: 'hs-scan-table' },
      el('thead', null, el('tr', null,
        el('th', { scope: 'col' }, 'Circle'), el('th', { scope: 'col' }, 'Centre'), el('th', { scope: 'col', class: 'n' }, 'Radius'),
        el('th', { scope: 'col', class: 'n' }, 'Events inside'), el('th', { scope: 'col', class: 'n' }, 'Expected inside'),
        el('th', { scope: 'col', class: 'n', title: 'risk inside the circle divided by risk outside it (relative risk)' }, 'Ratio'), el('th', { scope: 'col', class: 'n' }, 'p'))), tb)));
    scanOut.append(el('p', { class: 'hint' },
      `p = (1 + chance runs whose strongest circle beats this one) / (${fmt(nSim)} + 1), so ${fmt(1 / (nSim + 1), 3)} is the smallest possible. Next circles share no place with a stronger one; their p-values use the same yardstick and are conservative. Listed: next circles with at least two events inside and p below ${NEXT_P_MAX}${left > 0 ? ` (${fmt(left)} more found, left out)` : ''}. `,
      r.centres === 'grid' ? `Events were counted in grid cells of ${fmtMetres(r.cell_m)}; a circle passes through the centres of its outermost cells (radius 0 m: one cell).` : ''));
    drawOverlays();
  }

  section.append(part1, part2, part3);

  // ---------- the map ----------

  function drawOverlays() {
    const s = state.surface;
    if (s && state.showSurface) {
      const legend = [
        { label: `Events per km² (${fmt(s.breaks[0] * 0.5, 3)} to ${fmt(s.meta.max_per_km2, 3)})`, colour: RAMP[3], kind: 'fill' },
        { label: '50 / 75 / 95 % isopleths', colour: '#222222', kind: 'line' },
      ];
      C.setOverlay('hotspots-surface', (ctx, geo) => {
        const m = s.meta;
        const x0 = geo.toX(num(m.x0));
        const y1 = geo.toY(num(m.y0) + num(m.ny) * num(m.cell_m));
        const w = num(m.nx) * num(m.cell_m) * geo.k;
        const h = num(m.ny) * num(m.cell_m) * geo.k;
        ctx.imageSmoothingEnabled = false;
        ctx.drawImage(s.image, x0, y1, w, h);
        for (const c of Array.from(m.isopleths || [])) {
          const path = new Path2D();
          for (const poly of c.polygons) for (const ring of poly) {
            ring.forEach((p, i) => (i ? path.lineTo(geo.toX(p[0]), geo.toY(p[1])) : path.moveTo(geo.toX(p[0]), geo.toY(p[1]))));
            path.closePath();
          }
          const dash = (ISO_STYLE[num(c.percent)] || []).map((d) => d * geo.dpr);
          ctx.setLineDash(dash);
          ctx.lineWidth = 4 * geo.dpr;
          ctx.strokeStyle = 'rgba(255,255,255,0.8)';
          ctx.stroke(path);
          ctx.lineWidth = (num(c.percent) === 0.5 ? 2.2 : 1.6) * geo.dpr;
          ctx.strokeStyle = '#222222';
          ctx.stroke(path);
        }
        ctx.setLineDash([]);
      }, legend);
    } else {
      C.setOverlay('hotspots-surface', null);
    }
    const d = state.clusters;
    if (d && d.clusters && d.clusters.length) {
      C.setOverlay('hotspots-clusters', (ctx, geo) => {
        ctx.lineJoin = 'round';
        for (const c of d.clusters) {
          const ring = c.hull;
          if (!ring || ring.length < 2) continue;
          ctx.beginPath();
          ring.forEach((p, i) => (i ? ctx.lineTo(geo.toX(p[0]), geo.toY(p[1])) : ctx.moveTo(geo.toX(p[0]), geo.toY(p[1]))));
          ctx.closePath();
          ctx.fillStyle = 'rgba(15,92,90,0.14)';
          ctx.fill();
          ctx.lineWidth = 4 * geo.dpr;
          ctx.strokeStyle = 'rgba(255,255,255,0.85)';
          ctx.stroke();
          ctx.lineWidth = 2 * geo.dpr;
          ctx.strokeStyle = HULL;
          ctx.stroke();
        }
        ctx.font = `bold ${12 * geo.dpr}px sans-serif`;
        ctx.textAlign = 'center';
        ctx.textBaseline = 'middle';
        for (const c of d.clusters) {
          if (num(c.members) < 2) continue;
          const x = geo.toX(num(c.centre_x)), y = geo.toY(num(c.centre_y));
          ctx.lineWidth = 3 * geo.dpr;
          ctx.strokeStyle = '#ffffff';
          ctx.strokeText(String(num(c.id) + 1), x, y);
          ctx.fillStyle = HULL;
          ctx.fillText(String(num(c.id) + 1), x, y);
        }
      }, [{ label: 'Density clusters (hulls, numbered as in the table)', colour: HULL, kind: 'line' }]);
    } else {
      C.setOverlay('hotspots-clusters', null);
    }
    const r = state.scan;
    if (r && r.clusters && r.clusters.length) {
      C.setOverlay('hotspots-scan', (ctx, geo) => {
        const list = Array.from(r.clusters);
        for (let i = list.length - 1; i >= 0; i--) {
          const c = list[i];
          const main = num(c.rank) === 0;
          const sig = num(c.p_value) < 0.05;
          if (!main && !sig) continue;
          const x = geo.toX(num(c.centre_x)), y = geo.toY(num(c.centre_y));
          const rad = Math.max(num(c.radius_m) * geo.k, 4 * geo.dpr);
          ctx.beginPath();
          ctx.arc(x, y, rad, 0, 2 * Math.PI);
          ctx.setLineDash(main ? [] : [8 * geo.dpr, 4 * geo.dpr]);
          ctx.lineWidth = 5 * geo.dpr;
          ctx.strokeStyle = 'rgba(255,255,255,0.85)';
          ctx.stroke();
          ctx.lineWidth = (main ? 3 : 2) * geo.dpr;
          ctx.strokeStyle = main ? SCAN_MAIN : SCAN_OTHER;
          ctx.stroke();
        }
        ctx.setLineDash([]);
      }, [
        { label: 'Scan: strongest circle', colour: SCAN_MAIN, kind: 'line' },
        { label: 'Scan: next circles with p < 0.05', colour: SCAN_OTHER, kind: 'dash' },
      ]);
    } else {
      C.setOverlay('hotspots-scan', null);
    }
  }

  // ---------- data changes ----------

  function clearAll(reason) {
    askBox.hidden = true;
    if (state.job) {
      const job = state.job;
      state.job = null;
      job.cancel();
      job.promise.catch(() => {});
      cancelBtn.disabled = true;
      bar.hidden = true;
      barText.textContent = reason || '';
    }
    state.surface = null;
    state.clusters = null;
    state.kdist = null;
    state.scan = null;
    surfaceOut.replaceChildren();
    dbOut.replaceChildren();
    scanOut.replaceChildren();
    chart.hidden = true;
    $('hs-kdist-help').hidden = true;
    knee.hidden = true;
    epsIn.value = '';
    showBox.disabled = true;
    exportBtn.disabled = true;
    for (const p of [part1, part2, part3]) delete p.dataset.state;
    drawOverlays();
  }

  C.onSnapshot(async (snap) => {
    clearAll(snap && snap.study ? 'The data changed: the scan was stopped.' : '');
    const has = !!(snap && snap.study && num(snap.study.events) > 0);
    state.info = null;
    for (const b of [surfaceBtn, kdistBtn, dbBtn, scanBtn]) b.disabled = !has;
    root.dataset.ready = has ? '1' : '0';
    if (!has) { renderModel(); return; }
    try {
      state.info = await C.call('hotspotsInfo');
    } catch (_) {
      state.info = null;
    }
    const w = !!(state.info && state.info.has_weights);
    weightBox.disabled = !w;
    if (!w) weightBox.checked = false;
    $('hs-weights-label').title = w ? '' : 'The events file has no count column.';
    scanBtn.disabled = !state.info;
    renderModel();
  });
}
