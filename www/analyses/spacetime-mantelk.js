/* Cloister, "Close in space and time": the Mantel test (Mantel 1967) and
 * the space–time K function (Diggle, Chetwynd, Häggkvist & Morris 1995).
 * Every number, sentence and the shaded grid come from the engine
 * (src/spacetime/mantel.rs, src/spacetime/stk.rs, src/plot/stgrid.rs via
 * src/web/spacetime_mantelk.rs); this module lays out the controls and the
 * results. Mounted by spacetime.js into its section. */

export function mountSpaceTimeMantelK(C, body) {
  const { el, fmt, showError, clearError, setStatus } = C;
  const $ = (id) => document.getElementById(id);
  const field = (label, input, hint) => el('label', { class: 'stmk-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);
  const num = (id, param, value) => el('input', { type: 'number', id, 'data-param': param, value, step: 'any' });
  const seedInput = (id) => el('input', { type: 'text', id, inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' });
  const mantel = { job: null, token: 0, result: null };
  const stk = { job: null, token: 0, result: null };
  let ready = false;

  // ---------- the Mantel test ----------
  const mBox = el('fieldset', { class: 'stmk-box', id: 'stm-box' },
    el('legend', null, 'Are events close in place also close in time, over all pairs? (Mantel test)'),
    el('p', { class: 'hint' },
      'Every pair of events gives two separations: how far apart they are and how many days lie between them. ',
      'The Mantel statistic adds up their products; it is compared with the same sum after shuffling the dates among the places many times (Mantel 1967). ',
      'With the reciprocal form, close pairs weigh most.'),
    el('div', { class: 'stmk-grid' },
      field('Distance enters as', el('select', { id: 'stm-space' },
        el('option', { value: 'reciprocal' }, '1 / (distance + constant)'),
        el('option', { value: 'raw' }, 'the distance itself')), 'reciprocal: close pairs weigh most'),
      field('Time enters as', el('select', { id: 'stm-time' },
        el('option', { value: 'reciprocal' }, '1 / (days + constant)'),
        el('option', { value: 'raw' }, 'the days themselves')), ''),
      field('Distance constant (m)', num('stm-c1', 'mantelStart.space_constant_m', '1'), 'keeps events at one address finite'),
      field('Time constant (days)', num('stm-c2', 'mantelStart.time_constant_days', '1'), 'keeps events on one day finite'),
      field('Permutations', num('stm-nsim', 'mantelStart.n_sim', '999'), '999 is usual'),
      field('Longest date window used (days)', num('stm-win', 'mantelStart.max_window_days', '7'), 'events known only between two dates: placed at the middle, left out when longer'),
      field('Random seed', seedInput('stm-seed'), 'empty = a new one; type one to repeat a run')),
    el('div', { class: 'stmk-actions' },
      el('button', { type: 'button', id: 'stm-run', disabled: true }, 'Run Mantel test'),
      el('button', { type: 'button', id: 'stm-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'stm-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'stm-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'stm-result', class: 'stmk-result', hidden: true },
      el('p', { id: 'stm-verdict', class: 'stmk-verdict' }),
      el('dl', { id: 'stm-details', class: 'stmk-dl' }),
      el('ul', { id: 'stm-caveats', class: 'stmk-caveats' })));

  // ---------- the space–time K function ----------
  const kBox = el('fieldset', { class: 'stmk-box', id: 'stk-box' },
    el('legend', null, 'At which distances and times? (space\u2013time K function)'),
    el('p', { class: 'hint' },
      'For each distance and number of days, how many pairs of events lie within both, against what the map alone and the dates alone lead one to expect. ',
      'The grid shows, cell by cell, how far the data stand above (red) or below (blue) the shuffled dates, in standard deviations (Diggle, Chetwynd, H\u00e4ggkvist & Morris 1995).'),
    el('div', { class: 'stmk-grid' },
      field('Largest distance (m)', Object.assign(num('stk-smax', 'spaceTimeKStart.s_max_m', ''), { placeholder: 'automatic' }), 'empty = the clustering section\u2019s rule for the study area'),
      field('Largest time apart (days)', Object.assign(num('stk-tmax', 'spaceTimeKStart.t_max_days', ''), { placeholder: 'automatic' }), 'empty = a quarter of the span of the dates'),
      field('Distance steps', num('stk-ns', 'spaceTimeKStart.s_steps', '10'), ''),
      field('Time steps', num('stk-nt', 'spaceTimeKStart.t_steps', '10'), ''),
      field('Permutations', num('stk-nsim', 'spaceTimeKStart.n_sim', '199'), '199 is usual for this test'),
      field('Longest date window used (days)', num('stk-win', 'spaceTimeKStart.max_window_days', '7'), 'as for the Mantel test'),
      field('Random seed', seedInput('stk-seed'), 'empty = a new one')),
    el('div', { class: 'stmk-actions' },
      el('button', { type: 'button', id: 'stk-run', disabled: true }, 'Run space\u2013time K'),
      el('button', { type: 'button', id: 'stk-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('button', { type: 'button', id: 'stk-csv', class: 'quiet', disabled: true }, 'Save grid (CSV)'),
      el('progress', { id: 'stk-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'stk-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'stk-result', class: 'stmk-result', hidden: true },
      el('p', { id: 'stk-verdict', class: 'stmk-verdict' }),
      el('div', { class: 'stmk-chart-wrap' }, el('canvas', { id: 'stk-chart', role: 'img', 'aria-label': 'Shaded grid of standardised differences by distance and days' })),
      el('p', { class: 'hint' }, 'Red: more pairs within that distance and time than with the dates shuffled; blue: fewer; grey: no pairs vary there. The number in a cell (on grids of up to 15 \u00d7 15) is that difference in standard deviations of the shuffled runs; the shade stops deepening at 3. A dot marks a cell above all the shuffled runs (cell by cell; read the global test first).'),
      el('dl', { id: 'stk-details', class: 'stmk-dl' }),
      el('ul', { id: 'stk-caveats', class: 'stmk-caveats' })),
    el('p', { class: 'stmk-caution' },
      'A link between when and where is not a cause: a change in where people live or in how events are recorded over the period gives the same pattern. ',
      'The grid and its CSV hold distances and days only, no locations; disclosure rules still apply before sharing results about few events.'));

  body.append(mBox, kBox);

  const pText = (p) => (p < 0.001 ? '< 0.001' : fmt(p, 3));
  const setRunning = (prefix, extra) => (on) => {
    $(`${prefix}-run`).disabled = on || !ready;
    $(`${prefix}-cancel`).disabled = !on;
    $(`${prefix}-progress`).hidden = !on;
    if (extra) extra(on);
  };

  function readNumber(id, method, name, what, opts = {}) {
    const text = $(id).value.trim();
    if (text === '' && opts.optional) return null;
    const v = Number(text);
    const lim = C.param(method, name);
    const lowOk = lim.min_exclusive ? v > lim.min : v >= lim.min;
    const whole = opts.integer ? Number.isInteger(v) : true;
    if (!(text !== '' && Number.isFinite(v) && whole && (lim.min === null || lowOk) && (lim.max === null || v <= lim.max))) {
      throw { message: `${what} must be ${opts.integer ? 'a whole number ' : ''}from ${fmt(lim.min)} to ${fmt(lim.max)}.` };
    }
    return v;
  }

  // ---------- Mantel: run and show ----------
  async function runMantel() {
    clearError();
    let params;
    try {
      params = {
        space_transform: $('stm-space').value,
        time_transform: $('stm-time').value,
        space_constant_m: readNumber('stm-c1', 'mantelStart', 'space_constant_m', 'The distance constant'),
        time_constant_days: readNumber('stm-c2', 'mantelStart', 'time_constant_days', 'The time constant'),
        n_sim: readNumber('stm-nsim', 'mantelStart', 'n_sim', 'Permutations', { integer: true }),
        max_window_days: readNumber('stm-win', 'mantelStart', 'max_window_days', 'The longest date window'),
        seed: C.readSeed($('stm-seed')),
      };
    } catch (err) {
      showError('Could not start the Mantel test', err);
      return;
    }
    await C.runPanelJob(mantel, { start: 'mantelStart', step: 'mantelStep', finish: 'mantelFinish', params, parallel: { share: 'mantelShare', helperStart: 'mantelHelperStart', simulate: 'mantelSimulate', add: 'mantelAdd', minPiece: 4 } }, {
      progress: $('stm-progress'), text: $('stm-progress-text'), unit: 'permutations', running: setRunning('stm'),
      startText: 'Comparing every pair of events\u2026', started: 'Shuffling dates among the places\u2026',
      done: 'Mantel test done.', cancelled: 'Mantel test cancelled.', failed: 'The Mantel test could not run',
      result: (res) => { mantel.result = res; renderMantel(); },
    });
  }

  function renderMantel() {
    const res = mantel.result;
    $('stm-result').hidden = !res;
    if (!res) return;
    const v = $('stm-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    const tail = res.interaction_tail === 'upper' ? 'larger' : 'smaller';
    $('stm-details').replaceChildren(...[
      ['Events, pairs', `${fmt(res.n_events)} events, ${fmt(res.pairs)} pairs`],
      ['Statistic', `${fmt(res.statistic, 6)} (expected ${fmt(res.expected, 6)} with the dates shuffled, standard deviation ${fmt(Math.sqrt(res.variance), 4)})`],
      ['z', fmt(res.z_score, 3)],
      ['Correlation of the two separations', fmt(res.correlation, 4)],
      ['Permutation p', `${pText(res.p_value)} for a ${tail} statistic (the direction that means a link here); other tail ${pText(res.interaction_tail === 'upper' ? res.p_lower : res.p_upper)}`],
      ['Normal p', `${pText(res.interaction_tail === 'upper' ? res.p_normal_upper : res.p_normal_lower)} (approximation)`],
      ['Dates', res.times.statement],
      ['Permutations, seed', `${fmt(res.n_sim)}, seed ${res.seed}`],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('stm-caveats').replaceChildren(...res.caveats.map((t) => el('li', null, t)));
  }

  // ---------- space–time K: run, draw, export ----------
  async function runK() {
    clearError();
    let params;
    try {
      params = {
        s_max_m: readNumber('stk-smax', 'spaceTimeKStart', 's_max_m', 'The largest distance', { optional: true }),
        t_max_days: readNumber('stk-tmax', 'spaceTimeKStart', 't_max_days', 'The largest time apart', { optional: true }),
        s_steps: readNumber('stk-ns', 'spaceTimeKStart', 's_steps', 'Distance steps', { integer: true }),
        t_steps: readNumber('stk-nt', 'spaceTimeKStart', 't_steps', 'Time steps', { integer: true }),
        n_sim: readNumber('stk-nsim', 'spaceTimeKStart', 'n_sim', 'Permutations', { integer: true }),
        max_window_days: readNumber('stk-win', 'spaceTimeKStart', 'max_window_days', 'The longest date window'),
        seed: C.readSeed($('stk-seed')),
      };
    } catch (err) {
      showError('Could not start the space\u2013time K function', err);
      return;
    }
    stk.result = null;
    $('stk-csv').disabled = true;
    await C.runPanelJob(stk, { start: 'spaceTimeKStart', step: 'spaceTimeKStep', finish: 'spaceTimeKFinish', params, parallel: { share: 'spaceTimeKShare', helperStart: 'spaceTimeKHelperStart', simulate: 'spaceTimeKSimulate', add: 'spaceTimeKAdd' } }, {
      progress: $('stk-progress'), text: $('stk-progress-text'), unit: 'permutations', running: setRunning('stk'),
      startText: 'Finding the pairs of events within the largest distance\u2026', started: 'Shuffling dates among the places\u2026',
      done: 'Space\u2013time K function done.', cancelled: 'Space\u2013time K function cancelled.', failed: 'The space\u2013time K function could not run',
      result: (res) => { stk.result = res; renderK(); },
    });
  }

  function drawK() {
    const res = stk.result;
    if (!res) return;
    const canvas = $('stk-chart');
    const dpr = C.sizeChart(canvas);
    try {
      C.engine().drawSpaceTimeKGrid('stk-chart', { s: res.s, t: res.t, residual: res.residual, d: res.d, d_hi: res.d_hi, scale: dpr });
    } catch (err) {
      showError('Could not draw the grid', err);
    }
  }

  function renderK() {
    const res = stk.result;
    $('stk-result').hidden = !res;
    $('stk-csv').disabled = !res;
    if (!res) return;
    const v = $('stk-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    drawK();
    const peak = res.peak ? `within ${fmt(res.s[res.peak[0]], 0)} m and ${fmt(res.t[res.peak[1]], 1)} days (standardised difference ${fmt(res.residual[res.peak[0] * res.t.length + res.peak[1]], 2)})` : '\u2013';
    $('stk-details').replaceChildren(...[
      ['Global test', `p = ${pText(res.global_p)} (${fmt(res.at_least)} of ${fmt(res.n_sim)} permutations with a sum over the grid at least as large; for this sum every grid is standardised over the permutations and the data together, so it is ${fmt(res.global_statistic, 3)} here, not the sum of the numbers shown)`],
      ['Largest difference', peak],
      ['Events, close pairs', `${fmt(res.n_events)} events; ${fmt(res.pairs_within_s_max)} pairs within ${fmt(res.s_max_m, 0)} m`],
      ['Largest distance', `${fmt(res.s_max_m, 0)} m (${res.s_max_rule})`],
      ['Largest time apart', `${fmt(res.t_max_days, 1)} days (${res.t_max_rule}); dates span ${fmt(res.span_days, 1)} days`],
      ['Dates', res.times.statement],
      ['Permutations, seed', `${fmt(res.n_sim)}, seed ${res.seed}`],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('stk-caveats').replaceChildren(...res.caveats.map((t) => el('li', null, t)));
  }

  async function saveCsv() {
    const text = await C.call('spaceTimeKCsv');
    const name = C.downloadName('space-time-k', 'csv', stk.result ? stk.result.seed : undefined);
    const url = URL.createObjectURL(new Blob([text], { type: 'text/csv;charset=utf-8' }));
    const a = el('a', { href: url, download: name, hidden: true });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 30000);
    setStatus(`Saved ${name}.`);
  }

  $('stm-run').addEventListener('click', runMantel);
  $('stm-cancel').addEventListener('click', () => { if (mantel.job) mantel.job.cancel(); });
  $('stk-run').addEventListener('click', runK);
  $('stk-cancel').addEventListener('click', () => { if (stk.job) stk.job.cancel(); });
  $('stk-csv').addEventListener('click', C.act(saveCsv));
  window.addEventListener('resize', () => { if (stk.result && !$('stk-result').hidden) drawK(); });

  C.onSnapshot((snap) => {
    for (const p of [mantel, stk]) {
      p.token++;
      if (p.job) p.job.cancel();
      p.job = null;
      p.result = null;
    }
    const span = snap && snap.summary && snap.summary.time_span;
    ready = !!(span && span.n_with_time >= 4);
    $('stm-result').hidden = true;
    $('stk-result').hidden = true;
    $('stk-csv').disabled = true;
    $('stm-progress-text').textContent = '';
    $('stk-progress-text').textContent = '';
    setRunning('stm')(false);
    setRunning('stk')(false);
  });
}
