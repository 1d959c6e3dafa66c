/* "Compared with the population": the inhomogeneous K and L functions
 * (Baddeley, Møller & Waagepetersen 2000). Pairs of events are weighted by
 * the inverse of the intensity at their two points, the intensity coming
 * from the population file (scaled to the number of cases) or from the
 * events themselves (left one out), and compared with simulated patterns
 * that follow that intensity. Every number comes from the engine
 * (src/web/risk_inhom.rs, src/risk/inhomogeneous.rs); the chart is the
 * clustering chart drawing L_inhom with its own labels. Mounted by main.js
 * right after risk.js, into that section's body (id population-body). */

export function mountRiskInhom(C) {
  const body = document.getElementById('population-body');
  if (!body) throw { message: 'the section "Compared with the population" is missing' };
  const { el, fmt, fmtMetres, showError, clearError } = C;
  const $ = (id) => document.getElementById(id);
  const state = { job: null, token: 0, result: null, hasEvents: false, hasPopulation: false };

  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const source = el('select', { id: 'pin-source' },
    el('option', { value: 'population' }, 'the population file'),
    el('option', { value: 'events' }, 'the events themselves (left one out)'));
  const kernel = el('select', { id: 'pin-kernel' },
    el('option', { value: 'gaussian' }, 'Gaussian'),
    el('option', { value: 'quartic' }, 'quartic'));
  const correction = el('select', { id: 'pin-correction' },
    el('option', { value: 'isotropic' }, 'isotropic'),
    el('option', { value: 'translation' }, 'translation'),
    el('option', { value: 'none' }, 'none'));

  const box = el('fieldset', { class: 'clu-box', id: 'pop-inhom-box' },
    el('legend', null, 'Do events cluster beyond a varying intensity? (inhomogeneous K)'),
    el('p', { class: 'hint' },
      'Each pair of events counts in inverse proportion to the intensity at its two ends, so where people are many a close pair counts little. ' +
      'If the varying intensity is all there is, L(r) stays near r; above it, events sit closer together than the intensity explains (Baddeley, M\u00f8ller & Waagepetersen 2000). ' +
      'The band comes from patterns simulated at that intensity.'),
    el('div', { class: 'clu-grid' },
      field('Intensity from', source, 'the population file is scaled to the number of cases; counts are used when its count column is mapped'),
      field('Smoothing bandwidth', el('input', { type: 'number', id: 'pin-bandwidth', 'data-param': 'inhomKStart.bandwidth_m', placeholder: 'rule of thumb', step: 'any' }), 'metres; empty = rule of thumb (normal reference)'),
      field('Kernel', kernel, 'Gaussian: bandwidth = SD; quartic: = radius'),
      field('Simulations', el('input', { type: 'number', id: 'pin-nsim', 'data-param': 'inhomKStart.n_sim', value: '99' }), '99 is usual; 199 or more for a smaller p'),
      field('Largest distance', el('input', { type: 'number', id: 'pin-rmax', 'data-param': 'inhomKStart.r_max_m', placeholder: 'automatic', step: 'any' }), 'metres; empty = a quarter of the area\u2019s shorter side'),
      field(C.term('isotropic', 'Edge correction'), correction, 'of K'),
      field('Random seed', el('input', { type: 'text', id: 'pin-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'empty = a new one; type one to repeat a run')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'pin-run', disabled: true }, 'Run'),
      el('button', { type: 'button', id: 'pin-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'pin-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'pin-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('p', { class: 'hint', id: 'pin-needs' }, 'Load events (and a population file, or take the intensity from the events) to use this test.'),
    el('div', { id: 'pin-result', class: 'clu-result', hidden: true },
      el('div', { class: 'clu-chart-wrap' }, el('canvas', { id: 'pin-chart', width: 760, height: 420, role: 'img', 'aria-label': 'inhomogeneous L chart' })),
      el('p', { class: 'hint', id: 'pin-band-note' }),
      el('p', { id: 'pin-verdict', class: 'clu-verdict' }),
      el('p', { class: 'hint', id: 'pin-depends' }),
      el('ul', { id: 'pin-caveats', class: 'clu-caveats' }),
      el('dl', { id: 'pin-details', class: 'clu-dl' }),
      el('ul', { id: 'pin-warnings', class: 'clu-warnings' })));
  const caution = body.querySelector('.hs-caution');
  if (caution) body.insertBefore(box, caution);
  else body.append(box);

  function updateReady() {
    const ok = state.hasEvents && (source.value === 'events' || state.hasPopulation);
    $('pin-needs').hidden = ok;
    if (!state.job) $('pin-run').disabled = !ok;
    return ok;
  }

  function setRunning(on) {
    $('pin-cancel').disabled = !on;
    $('pin-progress').hidden = !on;
    $('pin-run').disabled = on || !updateReady();
  }

  function readOptions() {
    const o = { intensity_from: source.value, kernel: kernel.value, correction: correction.value };
    const n = Number($('pin-nsim').value);
    const lim = C.param('inhomKStart', 'n_sim');
    if (!(Number.isInteger(n) && n >= lim.min && n <= lim.max)) throw { message: `simulations must be a whole number from ${fmt(lim.min)} to ${fmt(lim.max)} (99 is usual).` };
    o.n_sim = n;
    const bw = $('pin-bandwidth').value.trim();
    if (bw !== '') {
      const v = Number(bw);
      if (!(v > 0)) throw { message: 'the bandwidth must be a positive number of metres, or empty for the rule of thumb.' };
      o.bandwidth_method = 'fixed';
      o.bandwidth_m = v;
    }
    const rm = $('pin-rmax').value.trim();
    if (rm !== '') {
      const v = Number(rm);
      if (!(v > 0)) throw { message: 'the largest distance must be a positive number of metres, or empty.' };
      o.r_max_m = v;
    }
    o.seed = C.readSeed($('pin-seed'));
    return o;
  }

  async function run() {
    clearError();
    let params;
    try {
      params = readOptions();
    } catch (err) {
      showError('Could not start the test', err);
      return;
    }
    // Simulation j depends only on the seed and j, so helper workers may
    // take shares of the run (www/worker.js); the result is the same.
    const spec = { start: 'inhomKStart', step: 'inhomKStep', finish: 'inhomKFinish', params, parallel: { share: 'inhomKShare', helperStart: 'inhomKHelperStart', simulate: 'inhomKSimulate', add: 'inhomKAdd' } };
    await C.runPanelJob(state, spec, {
      progress: $('pin-progress'), text: $('pin-progress-text'), unit: 'simulations', running: setRunning,
      startText: 'Estimating the intensity and K for the data\u2026', started: 'Simulating patterns at the estimated intensity\u2026',
      done: 'Inhomogeneous K test done.', cancelled: 'Inhomogeneous K test cancelled.', failed: 'The inhomogeneous K test could not run',
      result: (res) => { state.result = res; render(); },
    });
  }

  const pEq = (p) => (p < 0.001 ? 'p < 0.001' : `p = ${fmt(p, 3)}`);

  function drawChart() {
    const res = state.result;
    if (!res) return;
    const canvas = $('pin-chart');
    const dpr = C.sizeChart(canvas);
    const data = {
      function: 'l', r: res.r, observed: res.observed, theoretical: res.reference_curve,
      pointwise_lo: res.pointwise_lo, pointwise_hi: res.pointwise_hi, global_lo: res.global_lo, global_hi: res.global_hi,
      alpha: res.alpha, y_label: 'inhomogeneous L(r) \u2212 r ({unit})', reference_label: 'expected from the intensity alone (simulation mean)',
    };
    try {
      const drawn = C.engine().drawEnvelopeChart('pin-chart', data, { view: 'centred', units: 'auto', band: 'global', scale: dpr });
      canvas.dataset.drawn = '1';
      canvas.setAttribute('aria-label', `Chart: ${drawn.y_label} against ${drawn.x_label}, with the global band of the test`);
    } catch (err) {
      canvas.dataset.drawn = '0';
      showError('Could not draw the chart', err);
    }
  }

  function render() {
    const res = state.result;
    $('pin-result').hidden = !res;
    if (!res) return;
    $('pin-band-note').textContent = `The shaded band is the global ${fmt(100 * (1 - res.alpha), 3)}% band of the test around the curve expected from the intensity alone: if the observed curve leaves it anywhere, the test rejects "the varying intensity explains the pattern" at that level.`;
    const v = $('pin-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    // The first caveat (the answer depends on the intensity's bandwidth)
    // stands out on its own; the others are listed.
    $('pin-depends').replaceChildren(el('strong', null, res.caveats[0]));
    $('pin-caveats').replaceChildren(...res.caveats.slice(1).map((c) => el('li', null, c)));
    const from = res.intensity_from === 'population'
      ? `the population file (${fmt(res.n_controls)} rows, ${fmt(res.total_controls)} people in all), scaled to the ${fmt(res.n_cases)} events`
      : `the ${fmt(res.n_cases)} events, each left out of its own estimate`;
    $('pin-details').replaceChildren(...[
      ['Intensity from', from],
      ['Bandwidth', `${res.bandwidth_rule}; ${res.kernel === 'gaussian' ? 'Gaussian' : 'quartic'} kernel; edge correction of the intensity: ${res.intensity_edge.replace('_', '\u2013')}`],
      ['Intensity check', `${fmt(res.inverse_intensity_ratio, 3)} (sum of 1/intensity over the events \u00f7 the area; near 1 when the intensity\u2019s level fits)`],
      [C.term('mad', 'Maximum-deviation test'), `${pEq(res.mad.p_value)} (${fmt(res.mad.at_least_as_extreme)} of ${fmt(res.n_sim)} simulations at least as extreme)`],
      [C.term('dclf', 'Integrated-deviation test (DCLF)'), pEq(res.dclf.p_value)],
      ['Distances tested', `${fmtMetres(res.test_r_min)} to ${fmtMetres(res.test_r_max)}`],
      ['Largest distance', res.r_max_rule],
      ['Edge correction of K', String(res.correction)],
      ['Simulations', fmt(res.n_sim)],
      ['Seed', String(res.seed)],
      ['Smallest possible p', fmt(1 / (res.n_sim + 1), 3)],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('pin-warnings').replaceChildren(...(res.warnings || []).map((w) => el('li', null, w)));
    drawChart();
  }

  $('pin-run').addEventListener('click', run);
  $('pin-cancel').addEventListener('click', () => { if (state.job) state.job.cancel(); });
  source.addEventListener('change', updateReady);
  window.addEventListener('resize', () => { if (state.result) drawChart(); });

  C.onSnapshot((snap) => {
    state.token++;
    if (state.job) state.job.cancel();
    state.job = null;
    state.result = null;
    const study = snap && snap.study;
    state.hasEvents = Boolean(study && study.events > 1);
    state.hasPopulation = Boolean(study && study.controls > 1);
    if (state.hasEvents && !state.hasPopulation) source.value = 'events';
    if (state.hasPopulation) source.value = 'population';
    $('pin-result').hidden = true;
    $('pin-progress-text').textContent = '';
    setRunning(false);
  });
}
