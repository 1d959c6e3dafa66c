/* Cloister, "Compared with the population": the k-nearest-neighbour test of
 * Cuzick & Edwards (1990). For each k, how many of the cases' k nearest
 * neighbours are cases (T_k), against its exact mean under random
 * labelling (normal p) and against relabellings (rank p), plus one
 * combined test over all k. Every number comes from the engine
 * (src/web/risk_nearest.rs, src/risk/nearest.rs); this module only lays
 * out the controls and the table. Mounted by risk.js into its section. */

/** `body`: the section's body; `comparisons(snap)`: the [value, label]
 * pairs the section offers (the events against the population file, one
 * category against the others or against one other). */
export function mountRiskNearest(C, body, comparisons) {
  const { el, fmt, showError, clearError } = C;
  const $ = (id) => document.getElementById(id);
  const state = { job: null, token: 0, result: null, ready: false, compared: 'population', caseLabel: '', controlLabel: '' };
  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const compare = el('select', { id: 'pop-nn-compare' });
  const box = el('fieldset', { class: 'clu-box', id: 'pop-nn-box' },
    el('legend', null, 'Do cases have more cases among their nearest neighbours? (Cuzick\u2013Edwards)'),
    el('p', { class: 'hint' },
      'For each case, its k nearest points (cases or controls) are looked at, and the cases among them counted. ',
      'If cases only follow the population, that count is what a random choice of "cases" among all the points gives; ',
      'more says cases sit next to cases (Cuzick & Edwards 1990). Needs one point per control, not counts.'),
    el('div', { class: 'clu-grid' },
      field('Compare', compare, 'cases (first) against controls'),
      field('Neighbours up to k', el('input', { type: 'number', id: 'pop-nn-k', 'data-param': 'nearestCasesStart.k_max', value: '10' }), 'each k from 1 to this is tested'),
      field('Relabellings', el('input', { type: 'number', id: 'pop-nn-nsim', 'data-param': 'nearestCasesStart.n_sim', value: '999' }), '999 is usual'),
      field('Random seed', el('input', { type: 'text', id: 'pop-nn-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'empty = a new one; type one to repeat a run')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'pop-nn-run', disabled: true }, 'Run'),
      el('button', { type: 'button', id: 'pop-nn-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'pop-nn-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'pop-nn-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'pop-nn-result', class: 'clu-result', hidden: true },
      el('p', { id: 'pop-nn-verdict', class: 'clu-verdict' }),
      el('table', { id: 'pop-nn-table', class: 'small' },
        el('caption', null, 'Cases among the cases\u2019 k nearest neighbours'),
        el('thead', null, el('tr', null,
          el('th', { scope: 'col', class: 'n' }, 'k'),
          el('th', { scope: 'col', class: 'n' }, C.term('ce_t', 'T')),
          el('th', { scope: 'col', class: 'n' }, 'expected'),
          el('th', { scope: 'col', class: 'n' }, 'z'),
          el('th', { scope: 'col', class: 'n' }, C.term('ce_normal_p', 'normal p')),
          el('th', { scope: 'col', class: 'n' }, 'relabelling p'))),
        el('tbody', { id: 'pop-nn-rows' })),
      el('dl', { id: 'pop-nn-details', class: 'clu-dl' }),
      el('ul', { id: 'pop-nn-caveats', class: 'clu-caveats' }),
      el('ul', { id: 'pop-nn-warnings', class: 'clu-warnings' })));
  // Before the section's closing caution, which applies to both tests.
  const caution = body.querySelector('.hs-caution');
  body.insertBefore(box, caution);

  function setRunning(on) {
    $('pop-nn-run').disabled = on || !state.ready;
    $('pop-nn-cancel').disabled = !on;
    $('pop-nn-progress').hidden = !on;
  }

  function readOptions() {
    const o = {};
    if (compare.value !== 'population') {
      const [a, b] = JSON.parse(compare.value);
      o.cases_category = a;
      if (b !== null) o.controls_category = b;
    }
    for (const [id, name, what] of [['pop-nn-k', 'k_max', 'the number of neighbours'], ['pop-nn-nsim', 'n_sim', 'relabellings']]) {
      const v = Number($(id).value);
      const lim = C.param('nearestCasesStart', name);
      if (!(Number.isInteger(v) && v >= lim.min && v <= lim.max)) throw { message: `${what} must be a whole number from ${fmt(lim.min)} to ${fmt(lim.max)}.` };
      o[name] = v;
    }
    o.seed = C.readSeed($('pop-nn-seed'));
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
    await C.runPanelJob(state, { start: 'nearestCasesStart', step: 'nearestCasesStep', finish: 'nearestCasesFinish', params, parallel: { share: 'nearestCasesShare', helperStart: 'nearestCasesHelperStart', simulate: 'nearestCasesSimulate', add: 'nearestCasesAdd' } }, {
      progress: $('pop-nn-progress'), text: $('pop-nn-progress-text'), unit: 'relabellings', running: setRunning,
      startText: 'Finding every point\u2019s nearest neighbours\u2026', started: 'Relabelling cases and controls\u2026',
      done: 'Nearest-neighbour test done.', cancelled: 'Nearest-neighbour test cancelled.', failed: 'The nearest-neighbour test could not run',
      result: (res) => { state.result = res; render(); },
    });
  }

  const pText = (p) => (p === null ? '\u2013' : p < 0.001 ? '< 0.001' : fmt(p, 3));

  function render() {
    const res = state.result;
    $('pop-nn-result').hidden = !res;
    if (!res) return;
    const v = $('pop-nn-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    $('pop-nn-rows').replaceChildren(...res.rows.map((r) => el('tr', { 'data-small': r.p_value <= res.alpha ? '1' : '0' },
      el('td', { class: 'n' }, String(r.k)),
      el('td', { class: 'n' }, fmt(r.t)),
      el('td', { class: 'n' }, fmt(r.expected, 4)),
      el('td', { class: 'n' }, r.z === null ? '\u2013' : fmt(r.z, 3)),
      el('td', { class: 'n' }, pText(r.p_normal)),
      el('td', { class: 'n' }, pText(r.p_value)))));
    const c = res.combined;
    $('pop-nn-details').replaceChildren(...[
      ['Cases, controls', state.compared === 'population'
        ? `${fmt(res.n_cases)} events, ${fmt(res.n_controls)} controls`
        : `${fmt(res.n_cases)} ${state.caseLabel}, ${fmt(res.n_controls)} ${state.controlLabel}`],
      [C.term('ce_combined', 'Combined test over k'), c.max_z === null
        ? 'not defined (T cannot vary)'
        : `${c.p_value < 0.001 ? 'p < 0.001' : `p = ${fmt(c.p_value, 3)}`} (largest z = ${fmt(c.max_z, 3)} at k = ${c.at_k}; ${fmt(c.at_least_as_extreme)} of ${fmt(res.n_sim)} relabellings at least as large)`],
      ['Points at a shared address', fmt(res.stacked_points)],
      ['Relabellings', fmt(res.n_sim)],
      ['Seed', String(res.seed)],
      ['Smallest possible p', fmt(1 / (res.n_sim + 1), 3)],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('pop-nn-caveats').replaceChildren(...res.caveats.map((t) => el('li', null, t)));
    $('pop-nn-warnings').replaceChildren(...(res.warnings || []).map((w) => el('li', null, w)));
  }

  $('pop-nn-run').addEventListener('click', run);
  $('pop-nn-cancel').addEventListener('click', () => { if (state.job) state.job.cancel(); });

  C.onSnapshot((snap) => {
    state.token++;
    if (state.job) state.job.cancel();
    state.job = null;
    state.result = null;
    const study = snap && snap.study;
    // A population file with a count column is not one point per person:
    // the engine refuses it with a message saying which tests take counts.
    const options = comparisons(snap);
    compare.replaceChildren(...options.map(([val, t]) => el('option', { value: val }, t)));
    state.ready = Boolean(study && study.events > 1 && options.length > 0);
    $('pop-nn-result').hidden = true;
    $('pop-nn-progress-text').textContent = '';
    setRunning(false);
  });
}
