/* "Compared with the population", second method: the kernel relative-risk
 * surface (Bithell 1990; Kelsall & Diggle 1995). The log ratio of the case
 * and control densities at a common bandwidth, with pointwise tolerance
 * contours from random labellings and a global test of constant risk.
 * Every number comes from the engine (src/web/risk_surface.rs,
 * src/risk/relative_risk.rs); this file asks, draws and explains. Mounted
 * from risk.js into the section's body. */

/* Diverging colours made for this tool, centred on a risk ratio of 1: blue
 * (lower) through a warm grey (about the same) to orange-brown (higher).
 * Blue against orange stays apart for every common colour-vision
 * deficiency, and lightness falls evenly away from the middle on both
 * sides, so the order also reads in greyscale. */
const RR_COLOURS = ['#2f5f8a', '#6e94b8', '#b3c5d6', '#dedad2', '#ebc39a', '#d68a4c', '#9c4f1c'];
const RR_ALPHA = [0.72, 0.6, 0.5, 0.28, 0.5, 0.6, 0.72];
/** Class edges in risk ratios (not logs): below 0.5, 0.5–0.67, … above 2. */
const RR_EDGES = [0.5, 2 / 3, 0.9, 1 / 0.9, 1.5, 2];
const RAISED = '#5a2408';
const LOWERED = '#173a5e';
const FEW = [138, 138, 138];

export function mountRiskSurface(C, body) {
  const { el, fmt, fmtMetres } = C;
  const $ = (id) => document.getElementById(id);
  const state = { job: null, token: 0, result: null, image: null, ready: false, show: true };
  const num = (v) => Number(v);
  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const method = el('select', { id: 'rr-method' },
    el('option', { value: 'likelihood_cv', title: 'likelihood cross-validation of the case share (Kelsall & Diggle 1998)' }, 'cross-validation'),
    el('option', { value: 'pooled_rule', title: 'normal-reference rule on cases and controls together' }, 'rule of thumb'),
    el('option', { value: 'fixed' }, 'fixed'));
  const fixed = el('input', { type: 'number', id: 'rr-fixed', 'data-param': 'riskSurfaceStart.fixed_m', step: 'any', placeholder: 'metres', 'aria-label': 'Fixed bandwidth, metres', disabled: true });
  const cells = el('select', { id: 'rr-cells' },
    el('option', { value: '128' }, '128'), el('option', { value: '256', selected: true }, '256'), el('option', { value: '512' }, '512'));
  const edge = el('select', { id: 'rr-edge' },
    el('option', { value: 'uniform' }, 'uniform (Diggle)'), el('option', { value: 'jones_diggle' }, 'Jones–Diggle'), el('option', { value: 'none' }, 'none'));
  const showBox = el('input', { type: 'checkbox', id: 'rr-show', checked: true });
  method.addEventListener('change', () => { fixed.disabled = method.value !== 'fixed'; });
  showBox.addEventListener('change', () => { state.show = showBox.checked; drawOverlay(); });

  const box = el('fieldset', { class: 'clu-box', id: 'rr-box' },
    el('legend', null, 'Where is the risk raised? (relative-risk surface)'),
    el('p', { class: 'hint' },
      'The density of cases divided by the density of the population, both smoothed with the same bandwidth: 1 where cases are as common as the population predicts, 2 where twice as common (Bithell 1990; Kelsall & Diggle 1995). ' +
      'Lines mark where the ratio is higher (solid) or lower (dashed) than random labellings of the same people usually give, place by place.'),
    el('div', { class: 'clu-grid' },
      field('Bandwidth', el('span', { class: 'hs-inline' }, method, fixed), 'the same for cases and controls'),
      field('Random labellings', el('input', { type: 'number', id: 'rr-nsim', 'data-param': 'riskSurfaceStart.n_sim', value: '99' }), '99 is usual; more for steadier lines'),
      field('Grid cells', cells, 'along the area\u2019s longer side'),
      field('Edge correction', edge, 'the same for both surfaces'),
      field('Random seed', el('input', { type: 'text', id: 'rr-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'empty = a new one; type one to repeat a run')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'rr-run', disabled: true }, 'Draw the surface'),
      el('button', { type: 'button', id: 'rr-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'rr-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'rr-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'rr-result', class: 'clu-result', hidden: true },
      el('p', { id: 'rr-verdict', class: 'clu-verdict' }),
      el('p', { class: 'hs-legend-title' }, 'Risk ratio (cases against the population; 1 = as expected)'),
      el('ul', { class: 'hs-ramp', id: 'rr-legend', 'aria-label': 'Surface colours, risk ratio' }),
      el('p', { class: 'hint', id: 'rr-pointwise' }),
      el('div', { class: 'hs-buttons' },
        el('label', { class: 'check' }, showBox, ' Show on the map'),
        el('button', { type: 'button', id: 'rr-export', class: 'quiet' }, 'Download contours (GeoJSON)')),
      el('p', { class: 'hint', id: 'rr-export-note' }, 'The file holds the contour lines and the grey area only, no case or control location; a seed in its name lets the run be repeated. Check your local disclosure rules before sharing it.'),
      el('p', { id: 'rr-privacy' }),
      el('ul', { id: 'rr-caveats', class: 'clu-caveats' }),
      el('dl', { id: 'rr-details', class: 'clu-dl' }),
      el('ul', { id: 'rr-warnings', class: 'clu-warnings' })));
  const caution = body.querySelector('.hs-caution');
  body.insertBefore(box, caution);

  function setRunning(on) {
    $('rr-run').disabled = on || !state.ready;
    $('rr-cancel').disabled = !on;
    $('rr-progress').hidden = !on;
  }

  function readOptions() {
    const o = { method: method.value, edge: edge.value, cells: Number(cells.value) };
    if (method.value === 'fixed') {
      const v = Number(fixed.value);
      if (!(v > 0)) throw { message: 'a fixed bandwidth must be a positive number of metres.' };
      o.fixed_m = v;
    }
    const n = Number($('rr-nsim').value);
    const lim = C.param('riskSurfaceStart', 'n_sim');
    if (!(Number.isInteger(n) && n >= lim.min && n <= lim.max)) throw { message: `random labellings must be a whole number from ${fmt(lim.min)} to ${fmt(lim.max)} (99 is usual).` };
    o.n_sim = n;
    o.seed = C.readSeed($('rr-seed'));
    return o;
  }

  async function run() {
    C.clearError();
    let params;
    try {
      params = readOptions();
    } catch (err) {
      C.showError('Could not start the surface', err);
      return;
    }
    await C.runPanelJob(state, { start: 'riskSurfaceStart', step: 'riskSurfaceStep', finish: 'riskSurfaceFinish', params, parallel: { share: 'riskSurfaceShare', helperStart: 'riskSurfaceHelperStart', simulate: 'riskSurfaceSimulate', add: 'riskSurfaceAdd' } }, {
      progress: $('rr-progress'), text: $('rr-progress-text'), unit: 'random labellings', running: setRunning,
      startText: 'Choosing the bandwidth and computing the surface\u2026', started: 'Computing the relative-risk surface\u2026',
      done: 'Relative-risk surface drawn.', cancelled: 'Relative-risk surface cancelled.', failed: 'The relative-risk surface could not be drawn',
      result: (res) => { state.result = res; state.image = surfaceImage(res); render(); },
    });
  }

  function classOf(ratio) {
    let c = 0;
    while (c < RR_EDGES.length && ratio >= RR_EDGES[c]) c++;
    return c;
  }

  /** One canvas pixel per grid cell; hatched grey where controls are too few. */
  function surfaceImage(r) {
    const nx = num(r.nx), ny = num(r.ny);
    const img = document.createElement('canvas');
    img.width = nx;
    img.height = ny;
    const ctx = img.getContext('2d');
    const data = ctx.createImageData(nx, ny);
    const rgb = RR_COLOURS.map((h) => [parseInt(h.slice(1, 3), 16), parseInt(h.slice(3, 5), 16), parseInt(h.slice(5, 7), 16)]);
    for (let j = 0; j < ny; j++) {
      const row = (ny - 1 - j) * nx; // row 0 of the grid is the south edge
      for (let i = 0; i < nx; i++) {
        const k = j * nx + i;
        const cls = r.class[k];
        if (cls === 0) continue;
        const o = (row + i) * 4;
        if (cls === 1) {
          const stripe = (i + (ny - 1 - j)) % 4 === 0;
          data.data[o] = FEW[0]; data.data[o + 1] = FEW[1]; data.data[o + 2] = FEW[2];
          data.data[o + 3] = stripe ? 200 : 70;
          continue;
        }
        const c = classOf(Math.exp(r.log_rr[k]));
        data.data[o] = rgb[c][0]; data.data[o + 1] = rgb[c][1]; data.data[o + 2] = rgb[c][2];
        data.data[o + 3] = Math.round(255 * RR_ALPHA[c]);
      }
    }
    ctx.putImageData(data, 0, 0);
    return img;
  }

  const ratioText = (v) => (v >= 1 ? fmt(v, 2) : `1/${fmt(1 / v, 2)}`);

  function legendItems() {
    const items = [];
    for (let c = 0; c < RR_COLOURS.length; c++) {
      const lo = c === 0 ? null : RR_EDGES[c - 1];
      const hi = c === RR_COLOURS.length - 1 ? null : RR_EDGES[c];
      let text;
      if (lo === null) text = `below ${fmt(hi, 2)} (less than half)`;
      else if (hi === null) text = `${fmt(lo, 2)} or more (at least double)`;
      else if (c === 3) text = `${fmt(lo, 2)} to ${fmt(hi, 2)} (about as expected)`;
      else text = `${fmt(lo, 2)} to ${fmt(hi, 2)}`;
      items.push({ colour: RR_COLOURS[c], text });
    }
    return items;
  }

  function render() {
    const r = state.result;
    $('rr-result').hidden = !r;
    if (!r) { drawOverlay(); return; }
    const v = $('rr-verdict');
    v.textContent = r.verdict;
    v.dataset.globalP = String(r.t_p_value);
    const legend = $('rr-legend');
    legend.replaceChildren(...legendItems().map(({ colour, text }) => {
      const sw = el('span', { class: 'hs-sw', 'aria-hidden': 'true' });
      sw.style.background = colour;
      return el('li', null, sw, text);
    }));
    const few = el('span', { class: 'hs-sw', 'aria-hidden': 'true' });
    few.style.background = 'repeating-linear-gradient(135deg, #8a8a8a 0 2px, #e4e4e4 2px 6px)';
    legend.append(el('li', { id: 'rr-legend-few' }, few, 'too few controls: no ratio (not average risk)'));
    const line = (colour, dash) => {
      const s = el('span', { class: 'hs-sw', 'aria-hidden': 'true' });
      s.style.background = 'none';
      s.style.borderTop = `3px ${dash ? 'dashed' : 'solid'} ${colour}`;
      return s;
    };
    legend.append(
      el('li', { id: 'rr-legend-raised' }, line(RAISED, false), `POINTWISE raised risk: p \u2264 ${fmt(r.tolerance, 2)} (solid line)`),
      el('li', { id: 'rr-legend-lowered' }, line(LOWERED, true), `POINTWISE lowered risk: p \u2265 ${fmt(1 - r.tolerance, 2)} (dashed line)`));
    $('rr-pointwise').textContent = `The lines are POINTWISE: each place is compared with the ${fmt(r.n_sim)} random labellings on its own, so even with no real difference about ${fmt(100 * r.tolerance, 2)} % of the area would fall inside a solid line (and as much inside a dashed one). Read them with the global test in the verdict.`;
    const priv = r.privacy;
    const pp = $('rr-privacy');
    if (priv && priv.warning) {
      pp.className = 'warn';
      pp.replaceChildren(el('strong', null, 'Privacy: '), priv.warning);
    } else if (priv) {
      pp.className = 'hint';
      pp.textContent = `Every case has at least ${priv.threshold - 1} others within ${fmtMetres(priv.radius_m)} (twice the bandwidth), so no bump stands for one case alone. Check your own rules before sharing.`;
    } else {
      pp.textContent = '';
    }
    $('rr-caveats').replaceChildren(...r.caveats.map((c) => el('li', null, c)));
    const pEq = (p) => (p < 0.001 ? 'p < 0.001' : `p = ${fmt(p, 3)}`);
    $('rr-details').replaceChildren(...[
      ['Cases, controls', r.weighted ? `${fmt(r.n_cases)} events; ${fmt(r.controls_total)} people at ${fmt(r.n_control_points)} population points` : `${fmt(r.n_cases)} events, ${fmt(r.n_control_points)} controls`],
      ['Global test of constant risk', `${pEq(r.t_p_value)} (${fmt(r.t_at_least_as_large)} of ${fmt(r.n_sim)} labellings at least as far from flat)`],
      ['Bandwidth', `${fmtMetres(r.bandwidth_m)} (spread of each bell), ${r.method_text}`],
      ...(r.bandwidth_note ? [['Note', r.bandwidth_note]] : []),
      ['Risk ratio range', `${ratioText(r.min_ratio)} to ${ratioText(r.max_ratio)}`],
      ['Raised / lowered (pointwise)', `${fmt(100 * r.raised_share, 2)} % / ${fmt(100 * r.lowered_share, 2)} % of the area with a ratio`],
      ['Too few controls', `${fmt(100 * r.masked_share, 2)} % of the area (control density below ${fmt(100 * r.min_control_share, 2)} % of its median)`],
      ['Grid', `${fmt(r.nx)} × ${fmt(r.ny)} cells of ${fmtMetres(r.cell_m)}`],
      ['Edge correction', String(r.edge)],
      ['Seed', String(r.seed)],
      ['Smallest possible p', fmt(1 / (r.n_sim + 1), 3)],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('rr-warnings').replaceChildren(...(r.warnings || []).map((w) => el('li', null, w)));
    drawOverlay();
  }

  function strokeContour(ctx, geo, c, colour, dash) {
    const path = new Path2D();
    for (const poly of c.polygons) for (const ring of poly) {
      ring.forEach((p, i) => (i ? path.lineTo(geo.toX(p[0]), geo.toY(p[1])) : path.moveTo(geo.toX(p[0]), geo.toY(p[1]))));
      path.closePath();
    }
    ctx.setLineDash(dash ? [7 * geo.dpr, 4 * geo.dpr] : []);
    ctx.lineWidth = 4.5 * geo.dpr;
    ctx.strokeStyle = 'rgba(255,255,255,0.85)';
    ctx.stroke(path);
    ctx.lineWidth = 2.2 * geo.dpr;
    ctx.strokeStyle = colour;
    ctx.stroke(path);
    ctx.setLineDash([]);
  }

  function drawOverlay() {
    const r = state.result;
    if (!r || !state.show || !state.image) {
      C.setOverlay('risk-surface', null);
      return;
    }
    C.setOverlay('risk-surface', (ctx, geo) => {
      const x0 = geo.toX(num(r.x0));
      const y1 = geo.toY(num(r.y0) + num(r.ny) * num(r.cell_m));
      ctx.imageSmoothingEnabled = false;
      ctx.drawImage(state.image, x0, y1, num(r.nx) * num(r.cell_m) * geo.k, num(r.ny) * num(r.cell_m) * geo.k);
      strokeContour(ctx, geo, r.lowered, LOWERED, true);
      strokeContour(ctx, geo, r.raised, RAISED, false);
    }, [
      { label: 'Risk ratio: blue lower, orange higher than the population predicts', colour: RR_COLOURS[5], kind: 'fill' },
      { label: 'Too few controls (grey, hatched)', colour: '#8a8a8a', kind: 'fill' },
      { label: `Raised risk, POINTWISE p \u2264 ${fmt(r.tolerance, 2)}`, colour: RAISED, kind: 'line' },
      { label: `Lowered risk, POINTWISE p \u2265 ${fmt(1 - r.tolerance, 2)}`, colour: LOWERED, kind: 'dash' },
    ]);
  }

  $('rr-run').addEventListener('click', run);
  $('rr-cancel').addEventListener('click', () => { if (state.job) state.job.cancel(); });
  $('rr-export').addEventListener('click', C.act(async () => {
    try {
      const text = await C.call('riskContoursGeoJson');
      const blob = new Blob([text], { type: 'application/geo+json' });
      const url = URL.createObjectURL(blob);
      const name = C.downloadName('risk-contours', 'geojson', state.result ? state.result.seed : undefined);
      const a = el('a', { href: url, download: name });
      document.body.append(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(url), 10000);
      C.setStatus(`Contours saved as ${name} (made on this computer; nothing was sent).`);
    } catch (err) {
      C.showError('Could not export the contours', err);
    }
  }));

  C.onSnapshot((snap) => {
    state.token++;
    if (state.job) state.job.cancel();
    state.job = null;
    state.result = null;
    state.image = null;
    const study = snap && snap.study;
    state.ready = Boolean(study && study.events > 1 && study.controls > 1);
    $('rr-result').hidden = true;
    $('rr-progress-text').textContent = state.ready ? '' : 'Needs events and a population file.';
    setRunning(false);
    drawOverlay();
  });
}
