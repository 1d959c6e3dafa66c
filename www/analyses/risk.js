/* Cloister panel "Compared with the population": cases (the events)
 * against controls (the population file). First method: the random
 * labelling test of Diggle & Chetwynd (1991), D(r) = K of the cases − K of
 * the controls against relabellings. Every number comes from the engine
 * (src/web/risk.rs, src/risk/); the chart is the clustering chart module
 * drawing D with its own label. */

import { mountRiskNearest } from './risk-nearest.js';
import { mountRiskSurface } from './risk-surface.js';

export function mountRisk(C) {
  const { el, fmt, fmtMetres, showError, clearError } = C;
  const $ = (id) => document.getElementById(id);
  const state = { job: null, token: 0, result: null, ready: false, compared: 'population', caseLabel: '', controlLabel: '' };

  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const body = C.addSection('population', 'Compared with the population',
    'Cases follow where people live, so against chance alone they nearly always look clustered. ' +
    'With a population file (controls: one point per person of a sample, or per address) loaded, ' +
    'these tests ask whether cases cluster more than the population does.');

  // What is compared: the events against the population file, or one
  // category of the events against the others (or against one other).
  const compare = el('select', { id: 'pop-compare' });
  const statistic = el('select', { id: 'pop-statistic', 'data-param': 'labellingStart.statistic' },
    el('option', { value: 'difference' }, 'D(r): cases’ K minus controls’ K'),
    el('option', { value: 'cross_l' }, 'cross-type L (controls near cases)'));
  const correction = el('select', { id: 'pop-correction' },
    el('option', { value: 'isotropic' }, 'isotropic'),
    el('option', { value: 'translation' }, 'translation'),
    el('option', { value: 'none' }, 'none'));
  body.append(
    el('p', { class: 'hint', id: 'pop-needs' }, 'Load events and a population file (step 3), or events with a category column, to use this section.'),
    el('p', { class: 'hint', id: 'pop-layer', hidden: true }),
    el('fieldset', { class: 'clu-box', id: 'pop-labelling-box' },
      el('legend', null, 'Do cases cluster more than the population? (random labelling)'),
      el('p', { class: 'hint' },
        'D(r) is the K function of the cases minus that of the controls: above 0, cases sit closer together than the population at that distance. ' +
        'The band comes from relabelling: as many "cases" drawn at random from all the points, many times (Diggle & Chetwynd 1991).'),
      el('div', { class: 'clu-grid' },
        field('Compare', compare, 'cases (first) against controls'),
        field('Curve', statistic, 'D asks whether cases cluster among themselves more than controls do; the cross-type L whether cases keep apart from controls'),
        field('Relabellings', el('input', { type: 'number', id: 'pop-nsim', 'data-param': 'labellingStart.n_sim', value: '199' }), '199 is usual; 999 for a smaller p'),
        field('Largest distance', el('input', { type: 'number', id: 'pop-rmax', 'data-param': 'labellingStart.r_max_m', placeholder: 'automatic', step: 'any' }), 'metres; empty = a quarter of the area\u2019s shorter side'),
        field(C.term('isotropic', 'Edge correction'), correction, 'the same for cases and controls'),
        field('Random seed', el('input', { type: 'text', id: 'pop-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'empty = a new one; type one to repeat a run')),
      el('div', { class: 'clu-actions' },
        el('button', { type: 'button', id: 'pop-run', disabled: true }, 'Run'),
        el('button', { type: 'button', id: 'pop-cancel', class: 'quiet', disabled: true }, 'Cancel'),
        el('progress', { id: 'pop-progress', max: 1, value: 0, hidden: true }),
        el('span', { id: 'pop-progress-text', class: 'hint', 'aria-live': 'polite' })),
      el('div', { id: 'pop-result', class: 'clu-result', hidden: true },
        el('div', { class: 'clu-chart-wrap' }, el('canvas', { id: 'pop-chart', width: 760, height: 420, role: 'img', 'aria-label': 'D(r) chart' })),
        el('p', { class: 'hint', id: 'pop-band-note' }),
        el('p', { id: 'pop-verdict', class: 'clu-verdict' }),
        el('ul', { id: 'pop-caveats', class: 'clu-caveats' }),
        el('dl', { id: 'pop-details', class: 'clu-dl' }),
        el('ul', { id: 'pop-warnings', class: 'clu-warnings' }))),
    el('p', { class: 'hs-caution' }, el('strong', null, 'A raised risk is not a cause. '),
      'Cases and controls must come from the same population and be placed the same way (geocoding, rounding); otherwise the test measures that difference. Local disclosure rules apply to anything shared.'));
  mountRiskNearest(C, body, comparisons);
  mountRiskSurface(C, body);

  function setRunning(on) {
    $('pop-run').disabled = on || !state.ready;
    $('pop-cancel').disabled = !on;
    $('pop-progress').hidden = !on;
  }

  /** The comparisons the loaded data allow: [value, label]. */
  function comparisons(snap) {
    const study = snap && snap.study;
    // Rows with a blank category are of no known category: never compared.
    const cats = ((snap && snap.summary && snap.summary.categories) || []).filter((c) => c.count > 1 && c.name !== '(blank)').map((c) => c.name);
    const out = [];
    // A population file of counts is not a set of individuals: relabelling
    // needs one point per person (the categories can still be compared).
    if (study && study.controls > 1 && study.controls_population == null) out.push(['population', 'events against the population file']);
    if (cats.length >= 2) {
      for (const a of cats) out.push([JSON.stringify([a, null]), `${a} against the other categories`]);
      if (cats.length <= 6) {
        for (const a of cats) for (const b of cats) if (a !== b) out.push([JSON.stringify([a, b]), `${a} against ${b}`]);
      }
    }
    return out;
  }

  function readOptions() {
    const o = { correction: correction.value, statistic: statistic.value };
    if (compare.value !== 'population') {
      const [a, b] = JSON.parse(compare.value);
      o.cases_category = a;
      if (b !== null) o.controls_category = b;
    }
    const n = Number($('pop-nsim').value);
    const lim = C.param('labellingStart', 'n_sim');
    if (!(Number.isInteger(n) && n >= lim.min && n <= lim.max)) throw { message: `relabellings must be a whole number from ${fmt(lim.min)} to ${fmt(lim.max)} (199 is usual).` };
    o.n_sim = n;
    const rm = $('pop-rmax').value.trim();
    if (rm !== '') {
      const v = Number(rm);
      if (!(v > 0)) throw { message: 'the largest distance must be a positive number of metres, or empty.' };
      o.r_max_m = v;
    }
    o.seed = C.readSeed($('pop-seed'));
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
    state.compared = compare.value;
    if (compare.value !== 'population') {
      const [a, b] = JSON.parse(compare.value);
      state.caseLabel = `"${a}"`;
      state.controlLabel = b === null ? 'of the other categories' : `"${b}"`;
    }
    // Spread over every core: one piece per worker (each piece visits every
    // pair once, so pieces are as few as the workers; at most 256, as one
    // visit serves that many relabellings).
    const workers = C.jobWorkers();
    const parallel = { share: 'labellingShare', helperStart: 'labellingHelperStart', simulate: 'labellingSimulate', add: 'labellingAdd', minPiece: Math.min(256, Math.ceil(params.n_sim / workers)) };
    await C.runPanelJob(state, { start: 'labellingStart', step: 'labellingStep', finish: 'labellingFinish', params, parallel }, {
      progress: $('pop-progress'), text: $('pop-progress-text'), unit: 'relabellings', running: setRunning,
      startText: 'Computing D for the data\u2026', started: 'Relabelling cases and controls\u2026',
      done: 'Random labelling test done.', cancelled: 'Random labelling test cancelled.', failed: 'The random labelling test could not run',
      result: (res) => { state.result = res; render(); },
    });
  }

  const pEq = (p) => (p < 0.001 ? 'p < 0.001' : `p = ${fmt(p, 3)}`);

  function drawChart() {
    const res = state.result;
    if (!res) return;
    const canvas = $('pop-chart');
    const dpr = C.sizeChart(canvas);
    // The cross-type L rises with r like r itself: drawn as its difference
    // from the relabellings' mean (the test's reference), so the band shows.
    const cross = res.statistic === 'cross_l';
    const off = (v) => (cross ? v.map((x, k) => (x === null ? null : x - res.reference[k])) : v);
    const data = {
      function: cross ? 'l' : 'k', r: res.r, observed: off(res.observed), theoretical: res.r.map(() => 0),
      pointwise_lo: off(res.pointwise_lo), pointwise_hi: off(res.pointwise_hi), global_lo: off(res.global_lo), global_hi: off(res.global_hi),
      alpha: res.alpha,
      y_label: cross ? 'cross-type L \u2212 its relabelled mean ({unit})' : 'D(r) = K cases \u2212 K controls ({unit}\u00b2)',
      reference_label: cross ? 'mean of the relabellings' : 'no difference (D = 0)',
    };
    try {
      const drawn = C.engine().drawEnvelopeChart('pop-chart', data, { view: 'function', units: 'auto', band: 'global', scale: dpr });
      canvas.dataset.drawn = '1';
      canvas.setAttribute('aria-label', `Chart: ${drawn.y_label} against ${drawn.x_label}, with the global band of the test`);
    } catch (err) {
      canvas.dataset.drawn = '0';
      showError('Could not draw the chart', err);
    }
  }

  function render() {
    const res = state.result;
    $('pop-result').hidden = !res;
    if (!res) return;
    $('pop-band-note').textContent = res.statistic === 'cross_l'
      ? `The shaded band is the global ${fmt(100 * (1 - res.alpha), 3)}% band of the test around the mean of the relabelled curves: below it, cases have fewer controls around them than random labels would give (they keep apart from the population); above it, more.`
      : `The shaded band is the global ${fmt(100 * (1 - res.alpha), 3)}% band of the test, scaled at each distance by how much D varies there under relabelling: if D leaves it anywhere, the test rejects "cases cluster as the population does" at that level.`;
    const v = $('pop-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    $('pop-caveats').replaceChildren(...res.caveats.map((c) => el('li', null, c)));
    const dl = $('pop-details');
    dl.replaceChildren(...[
      ['Cases, controls', state.compared === 'population'
        ? `${fmt(res.n_cases)} events, ${fmt(res.n_controls)} controls`
        : `${fmt(res.n_cases)} ${state.caseLabel}, ${fmt(res.n_controls)} ${state.controlLabel}`],
      [C.term('mad', 'Maximum-deviation test'), `${pEq(res.mad.p_value)} (${fmt(res.mad.at_least_as_extreme)} of ${fmt(res.n_sim)} relabellings at least as extreme)`],
      [C.term('dclf', 'Integrated-deviation test (DCLF)'), pEq(res.dclf.p_value)],
      ['Distances tested', `${fmtMetres(res.test_r_min)} to ${fmtMetres(res.test_r_max)}`],
      ['Largest distance', res.r_max_rule],
      ['Edge correction', String(res.correction)],
      ['Relabellings', fmt(res.n_sim)],
      ['Seed', String(res.seed)],
      ['Smallest possible p', fmt(1 / (res.n_sim + 1), 3)],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('pop-warnings').replaceChildren(...(res.warnings || []).map((w) => el('li', null, w)));
    drawChart();
  }

  $('pop-run').addEventListener('click', run);
  $('pop-cancel').addEventListener('click', () => { if (state.job) state.job.cancel(); });
  window.addEventListener('resize', () => { if (state.result) drawChart(); });

  C.onSnapshot((snap) => {
    state.token++;
    if (state.job) state.job.cancel();
    state.job = null;
    state.result = null;
    const study = snap && snap.study;
    const options = comparisons(snap);
    compare.replaceChildren(...options.map(([v, t]) => el('option', { value: v }, t)));
    state.ready = Boolean(study && study.events > 1 && options.length > 0);
    // What the loaded population file allows, in words.
    const layer = $('pop-layer');
    layer.hidden = !(study && study.controls > 0);
    if (study && study.controls > 0) {
      layer.textContent = study.controls_population == null
        ? `Population file: ${fmt(study.controls)} controls, one point per person. Every test in this section can use it.`
        : `Population file: ${fmt(study.controls)} points with a count column (${fmt(study.controls_population)} people in all). ` +
          'The random labelling test needs one point per person, so it is not offered for it; the methods of this section that work with counts use them as weights, and the scan (under "Where are the hotspots?") compares the events with these counts.';
    }
    $('pop-needs').hidden = state.ready;
    $('pop-result').hidden = true;
    $('pop-progress-text').textContent = '';
    setRunning(false);
  });
}
