/* Cloister panel "Is it clustered?": distance-function tests with
 * simulation envelopes, the quadrat test and the Clark–Evans index.
 * Every number comes from the engine (src/web/clustering.rs): the worker
 * simulates and tests, the page's own engine instance draws the chart with
 * plotters on a canvas. Files are saved by the browser from a Blob. */

/** Adds the panel to the page; C is the page's panel API (www/panel-api.js). */
export function mountClustering(C) {
  const { el, fmt, fmtMetres, fmtDuration: duration, call, runJob, act, setStatus, showError, clearError } = C;
  /* A run estimated to take longer than this asks before it starts, with
   * faster settings and their own estimates. The estimate comes from a
   * quick measurement (envelopeEstimate) before the observed curve. */
  const CONFIRM_ABOVE_MS = C.longRunMs;
  const $ = (id) => document.getElementById(id);

  const FUNCTIONS = [
    ['l', 'L \u2013 Ripley\u2019s K as a distance'],
    ['k', 'K \u2013 Ripley\u2019s K'],
    ['pair_correlation', 'g \u2013 pair correlation'],
    ['nearest_neighbour', 'G \u2013 nearest neighbour'],
    ['empty_space', 'F \u2013 empty space'],
    ['j', 'J \u2013 G set against F'],
  ];
  const FUNCTION_HINTS = {
    l: 'Neighbours within each distance, rescaled so chance is a flat line. Recommended first look.',
    k: 'Average number of other events within each distance, per unit density.',
    pair_correlation: 'Neighbours at (not within) each distance: shows the size of clusters more sharply.',
    nearest_neighbour: 'Share of events whose nearest neighbour is within each distance.',
    empty_space: 'Share of places in the area that have an event within each distance.',
    j: 'Nearest-neighbour against empty-space distances: below 1 clustered, above 1 regular.',
  };
  const PAIR_FUNCTIONS = new Set(['l', 'k', 'pair_correlation']);
  const CORRECTIONS = {
    pair: [['isotropic', 'isotropic'], ['translation', 'translation'], ['border', 'border'], ['none', 'none']],
    pair_g: [['isotropic', 'isotropic'], ['translation', 'translation'], ['none', 'none']],
    nn: [['border', 'border'], ['none', 'none']],
  };
  const ESTIMATORS = [['auto', 'automatic'], ['exact', 'every pair (exact)'], ['binned', 'on a fine grid (fast, for large patterns)']];
  const ESTIMATOR_HINTS = {
    auto: 'every pair when that is quick enough, else a fine grid',
    exact: 'counts every pair of events: exact, slow for large patterns',
    binned: 'counts events in small cells, then cell to cell: same time for any number of events; translation correction only',
  };
  const CORRECTION_HINTS = {
    isotropic: 'counts each pair by the share of its circle inside the area',
    translation: 'counts each pair by the overlap of the area with a shifted copy',
    border: 'uses only events (or places) farther from the edge than the distance',
    none: 'no correction: values near the edge are too low',
  };

  const state = {
    job: null, // {cancel} while a run is going
    asking: null, // {token, params} while the estimate box waits for an answer
    estimate: null, // the last envelopeEstimate answer
    runToken: 0,
    result: null, // last envelope result
    hasData: false,
  };

  // ---------- markup ----------

  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);
  const select = (id, options, value) => {
    const s = el('select', { id });
    for (const [v, t] of options) s.append(el('option', { value: v, selected: v === value ? true : null }, t));
    return s;
  };

  const body = C.addSection('clustering', 'Is it clustered?',
    'Compares the distances between events with what pure chance would give in the same study area ' +
    '(complete spatial randomness: every place equally likely). Chance is simulated many times; ' +
    'the chart shows where the events depart from it, and at which distances.');
  body.dataset.run = 'idle';

  const envBox = el('fieldset', { class: 'clu-box', id: 'clu-env-box' },
    el('legend', null, 'Distances between events, against simulated chance'),
    el('div', { class: 'clu-grid' },
      field('Function', select('clu-function', FUNCTIONS, 'l'), ' '),
      field('Edge correction', el('select', { id: 'clu-correction' }), ' '),
      field('Pair counting', select('clu-estimator', ESTIMATORS, 'auto'), ' '),
      field('Simulations', el('input', { type: 'number', id: 'clu-nsim', 'data-param': 'envelopeStart.n_sim' }), '199 is usual; 999 or more for a smaller p'),
      field('Largest distance (m)', el('input', { type: 'number', id: 'clu-rmax', step: 'any', 'data-param': 'envelopeStart.r_max_m', placeholder: 'automatic' }), 'empty: chosen from the study area\u2019s shape'),
      el('fieldset', { class: 'clu-field clu-kind', role: 'radiogroup' },
        el('legend', null, 'Band on the chart'),
        el('label', null, el('input', { type: 'radio', name: 'clu-kind', value: 'global', id: 'clu-kind-global', checked: true }), ' global test band'),
        el('label', null, el('input', { type: 'radio', name: 'clu-kind', value: 'pointwise', id: 'clu-kind-pointwise' }), ' pointwise \u2014 not a test')),
      field('Random seed', el('input', { type: 'text', id: 'clu-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'type a seed from an earlier run to repeat it exactly'),
      el('label', { class: 'check clu-fresh' }, el('input', { type: 'checkbox', id: 'clu-fresh', checked: true }), ' new seed for every run')),
    el('details', { class: 'clu-about', id: 'clu-estimator-about' },
      el('summary', null, 'Counting pairs on a fine grid: what it trades'),
      el('p', { class: 'hint' }, 'K, L and g add up the pairs of events closer than each distance. Counting every pair ' +
        'takes time that grows with the square of the number of events: minutes for 100,000 events and 199 simulations. ' +
        'On a fine grid the page counts the events in about a million small square cells and counts pairs cell to cell ' +
        'with a fast Fourier transform, which takes the same time (a fraction of a second per pattern) for 10,000 or 200,000 events.'),
      el('p', { class: 'hint' }, 'What it trades: a tiny error from not knowing where in its cell an event lies ' +
        '(checked against counting every pair: below 0.1 % for K and L, and below 1 % for g, from about 20 cells on; ' +
        'the result gives the cell size), and the translation edge correction only. The simulations use the same grid, ' +
        'so the test stays fair.'),
      el('p', { class: 'hint' }, 'Automatic counts every pair unless there are more than 60 million pairs within the largest distance; ' +
        'then it uses the grid, with the translation correction in place of the isotropic one, and the result says so.')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'clu-run', disabled: true }, 'Run'),
      el('button', { type: 'button', id: 'clu-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'clu-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'clu-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'clu-estimate', class: 'estimate', role: 'alert', hidden: true },
      el('p', { id: 'clu-estimate-text' }),
      el('p', { class: 'hint' }, 'Faster: fewer simulations (39 gives a rough answer, 99 or 199 is usual), ' +
        'a smaller largest distance, or the border correction for K and L. A button below sets that field; then press Run.'),
      el('ul', { id: 'clu-faster', class: 'faster' }),
      el('div', { class: 'buttons' },
        el('button', { type: 'button', id: 'clu-estimate-go' }, 'Run it'),
        el('button', { type: 'button', id: 'clu-estimate-stop', class: 'quiet' }, 'Stop and change the settings'))),
    el('div', { id: 'clu-env-result', class: 'clu-result', hidden: true },
      el('div', { class: 'clu-grid clu-view' },
        field('Show', select('clu-view', [['centred', 'difference from chance'], ['function', 'the function itself']], 'centred')),
        field('Distances in', select('clu-units', [['auto', 'automatic'], ['m', 'metres'], ['km', 'kilometres']], 'auto'))),
      el('div', { class: 'clu-chart-wrap' }, el('canvas', { id: 'clu-chart', width: 760, height: 420, role: 'img', 'aria-label': 'Envelope chart' })),
      el('p', { id: 'clu-band-note', class: 'hint' }),
      el('p', { id: 'clu-verdict', class: 'clu-verdict' }),
      el('ul', { id: 'clu-caveats', class: 'clu-caveats' }),
      el('dl', { id: 'clu-details', class: 'clu-dl' }),
      el('ul', { id: 'clu-warnings', class: 'clu-warnings' }),
      el('div', { class: 'clu-actions' },
        el('button', { type: 'button', id: 'clu-png', class: 'quiet' }, 'Save chart (PNG)'),
        el('button', { type: 'button', id: 'clu-csv', class: 'quiet' }, 'Save numbers (CSV)'))));
  body.append(envBox);

  const quadBox = el('fieldset', { class: 'clu-box', id: 'clu-quad-box' },
    el('legend', null, 'Counts in a grid of cells (quadrat test)'),
    el('div', { class: 'clu-grid' },
      field('Columns', el('input', { type: 'number', id: 'clu-nx', 'data-param': 'quadratTest.nx', placeholder: 'automatic' })),
      field('Rows', el('input', { type: 'number', id: 'clu-ny', 'data-param': 'quadratTest.ny', placeholder: 'automatic' })),
      field('Simulations', el('input', { type: 'number', id: 'clu-quad-nsim', 'data-param': 'quadratTest.n_sim' }))),
    el('div', { class: 'clu-actions' }, el('button', { type: 'button', id: 'clu-quad-run', disabled: true }, 'Count and test')),
    el('div', { id: 'clu-quad-result', class: 'clu-result' }));
  const ceBox = el('fieldset', { class: 'clu-box', id: 'clu-ce-box' },
    el('legend', null, 'Nearest-neighbour ratio (Clark\u2013Evans)'),
    el('div', { class: 'clu-grid' },
      field('Simulations', el('input', { type: 'number', id: 'clu-ce-nsim', 'data-param': 'clarkEvans.n_sim' }))),
    el('div', { class: 'clu-actions' }, el('button', { type: 'button', id: 'clu-ce-run', disabled: true }, 'Compute')),
    el('div', { id: 'clu-ce-result', class: 'clu-result' }));
  body.append(el('div', { class: 'clu-pair' }, quadBox, ceBox));

  // ---------- helpers ----------

  function randomSeed() {
    const a = new Uint32Array(2);
    crypto.getRandomValues(a);
    return (a[0] & 0x1fffff) * 4294967296 + a[1];
  }
  const newSeed = () => { $('clu-seed').value = String(randomSeed()); };

  function readSeed() {
    const s = $('clu-seed').value.trim();
    const maxSeed = C.param('envelopeStart', 'seed').max;
    if (!/^\d{1,16}$/.test(s) || Number(s) > maxSeed) {
      throw { code: 'bad_parameter', message: `the seed must be a whole number from 0 to ${maxSeed}` };
    }
    return Number(s);
  }

  /** A whole number within the control's limits (set from the engine's parameterSpec). */
  function readInt(id, what) {
    const lo = Number($(id).min);
    const hi = Number($(id).max);
    const v = Number($(id).value);
    if (!Number.isInteger(v) || v < lo || v > hi) throw { code: 'bad_parameter', message: `${what} must be a whole number from ${lo} to ${hi}` };
    return v;
  }

  /** The largest distance in metres, or null for the automatic rule. */
  function readRmax() {
    const s = $('clu-rmax').value.trim();
    if (s === '') return null;
    const v = Number(s);
    const hi = Number($('clu-rmax').max);
    if (!Number.isFinite(v) || v <= 0 || (hi > 0 && v > hi)) {
      throw { code: 'bad_parameter', message: `the largest distance must be a number of metres above 0${hi > 0 ? ` and at most ${fmt(hi)}` : ''}, or empty for the automatic choice (got "${s}")` };
    }
    return v;
  }

  /** Shows the automatic largest distance (from the engine) beside the field. */
  function rmaxHint(est) {
    if (!est) return;
    $('clu-rmax').placeholder = `automatic: ${fmt(Math.round(est.r_max_m))}`;
    $('clu-rmax').parentElement.querySelector('small').textContent = `empty: ${est.r_max_rule}`;
  }

  function fillCorrections() {
    const f = $('clu-function').value;
    const list = f === 'pair_correlation' ? CORRECTIONS.pair_g : PAIR_FUNCTIONS.has(f) ? CORRECTIONS.pair : CORRECTIONS.nn;
    const s = $('clu-correction');
    const old = s.value;
    s.replaceChildren(...list.map(([v, t]) => el('option', { value: v }, t)));
    s.value = list.some(([v]) => v === old) ? old : list[0][0];
    // Pair counting applies to K, L and g only.
    $('clu-estimator').disabled = !PAIR_FUNCTIONS.has(f);
    hints();
  }

  /** The grid counts with the translation correction only: choosing it sets
   * that correction; choosing another correction goes back to automatic. */
  function estimatorChanged() {
    if ($('clu-estimator').value === 'binned') $('clu-correction').value = 'translation';
    hints();
  }
  function correctionChanged() {
    if ($('clu-estimator').value === 'binned' && $('clu-correction').value !== 'translation') $('clu-estimator').value = 'auto';
    hints();
  }

  function hints() {
    $('clu-function').parentElement.querySelector('small').textContent = FUNCTION_HINTS[$('clu-function').value] || '';
    $('clu-correction').parentElement.querySelector('small').textContent = CORRECTION_HINTS[$('clu-correction').value] || '';
    $('clu-estimator').parentElement.querySelector('small').textContent = $('clu-estimator').disabled
      ? 'G, F and J always use every event' : ESTIMATOR_HINTS[$('clu-estimator').value] || '';
  }

  const pText = (p) => (p === null || p === undefined ? '—' : p < 1e-4 ? 'below 0.0001' : fmt(p, 3));
  const pEq = (p) => (p !== null && p !== undefined && p < 1e-4 ? 'p < 0.0001' : `p = ${pText(p)}`);

  function dl(target, rows) {
    target.replaceChildren();
    for (const [k, v, key] of rows) {
      target.append(el('dt', null, k), el('dd', key ? { 'data-key': key } : null, v));
    }
  }

  function download(blob, name) {
    const url = URL.createObjectURL(blob);
    const a = el('a', { href: url, download: name, hidden: true });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 30000);
  }

  function setRun(kind) {
    body.dataset.run = kind;
    const running = kind === 'running' || kind === 'asking';
    $('clu-run').disabled = running || !state.hasData;
    $('clu-cancel').disabled = !running;
    $('clu-progress').hidden = !running;
  }

  // ---------- envelope run ----------

  async function run() {
    clearError();
    let params;
    try {
      if ($('clu-fresh').checked) newSeed();
      const f = $('clu-function').value;
      params = { function: f, n_sim: readInt('clu-nsim', 'the number of simulations'), seed: readSeed() };
      if (PAIR_FUNCTIONS.has(f)) {
        params.correction = $('clu-correction').value;
        params.estimator = $('clu-estimator').value;
      } else params.nn_correction = $('clu-correction').value;
      const rmax = readRmax();
      if (rmax !== null) params.r_max_m = rmax;
    } catch (err) {
      showError('Could not start the run', err);
      return;
    }
    const token = ++state.runToken;
    setRun('running');
    $('clu-progress').max = params.n_sim;
    $('clu-progress').value = 0;
    $('clu-progress-text').textContent = 'Measuring how long this run will take\u2026';
    // A quick measurement first (a fraction of a second for any number of
    // events): a long run asks before the observed curve is computed.
    let est = null;
    try {
      est = await call('envelopeEstimate', params, C.jobWorkers());
    } catch (err) {
      if (token !== state.runToken) return;
      setRun('error');
      $('clu-progress-text').textContent = '';
      if (!(err && (err.code === 'engine_stopped' || err.code === 'cancelled'))) showError('The envelope test could not run', err);
      return;
    }
    if (token !== state.runToken) return;
    state.estimate = est;
    rmaxHint(est);
    if (est.run_ms > CONFIRM_ABOVE_MS) {
      state.asking = { token, params };
      setRun('asking');
      showEstimate(`This run will take ${duration(est.run_ms)}: one curve takes ${duration(est.curve_ms)} with ` +
        `${fmt(est.events)} events (timed on ${fmt(est.probe_events)} of them${est.estimator === 'binned' ? ', pairs counted on a fine grid' : ''}), and ${fmt(est.n_sim)} simulations follow` +
        `${est.workers > 1 ? ` on ${fmt(est.workers)} workers` : ''}.`, est);
      return;
    }
    startRun(token, params, est, true);
  }

  /** Fills and shows the estimate box: the sentence, and a button per faster setting. */
  function showEstimate(text, est) {
    $('clu-estimate-text').textContent = text;
    const list = $('clu-faster');
    list.replaceChildren(...((est && est.faster) || []).map((f) => {
      const b = el('button', { type: 'button', class: 'quiet', id: `clu-faster-${f.option}-${String(f.number ?? f.choice).replace('.', '_')}`, 'data-option': f.option }, `Use ${f.label}`);
      b.addEventListener('click', () => useFaster(f));
      return el('li', null, b, ` \u2014 the run: ${duration(f.run_ms)}`);
    }));
    $('clu-estimate').hidden = false;
    $('clu-progress-text').textContent = 'Waiting for your answer\u2026';
  }

  /** Sets the field of one faster setting; the user then presses Run. */
  function useFaster(f) {
    if (f.option === 'n_sim') $('clu-nsim').value = String(f.number);
    else if (f.option === 'r_max_m') $('clu-rmax').value = String(f.number);
    else if (f.option === 'correction') { $('clu-correction').value = f.choice; hints(); }
    state.asking = null;
    state.runToken++;
    if (state.job) state.job.cancel();
    state.job = null;
    $('clu-estimate').hidden = true;
    setRun('idle');
    $('clu-progress-text').textContent = `Set to ${f.label}: the run should take ${duration(f.run_ms)}. Press Run.`;
    $('clu-run').focus();
  }

  /** Starts the envelope job; `confirm`: the worker still asks when the
   * observed curve shows the run will be long (the quick estimate can be off). */
  async function startRun(token, params, est, confirm) {
    $('clu-progress').max = params.n_sim;
    $('clu-progress').value = 0;
    $('clu-progress-text').textContent = 'Computing the observed curve\u2026';
    setStatus('Simulating chance patterns…');
    // Time left is estimated from the simulations done so far (the first
    // progress report comes after the observed pattern is computed).
    let t0 = null;
    let d0 = 0;
    // Until the observed curve is done, time left counts down from the estimate.
    const curveStart = performance.now();
    const countdown = setInterval(() => {
      if (token !== state.runToken || t0 !== null) { clearInterval(countdown); return; }
      const left = est.curve_ms - (performance.now() - curveStart);
      $('clu-progress-text').textContent = `Computing the observed curve${left > 1000 ? ` \u00b7 about ${duration(left).replace(/^about /, '')} left` : '\u2026'}`;
    }, 1000);
    const spec = { start: 'envelopeStart', step: 'envelopeStep', finish: 'envelopeFinish', params, parallel: { share: 'envelopeShare', helperStart: 'envelopeHelperStart', simulate: 'envelopeSimulate', add: 'envelopeAdd' } };
    if (confirm) spec.confirm_above_ms = CONFIRM_ABOVE_MS;
    const job = runJob(spec, ({ done, total, workers, waiting, estimate_ms: estMs, start_ms: one }) => {
      if (token !== state.runToken) return;
      clearInterval(countdown);
      if (waiting) {
        state.asking = { token, params, job: true };
        showEstimate(`This run will take ${duration(estMs)}: one curve took ${duration(one)} ` +
          `with ${fmt(C.snapshot() && C.snapshot().study ? C.snapshot().study.events : 0)} events, and ${fmt(total)} simulations follow` +
          `${workers > 1 ? ` on ${fmt(workers)} workers` : ''}.`, est);
        return;
      }
      state.asking = null;
      $('clu-estimate').hidden = true;
      $('clu-progress').max = total;
      $('clu-progress').value = done;
      const now = performance.now();
      if (t0 === null) { t0 = now; d0 = done; }
      let extra = '';
      if (done > d0 && now - t0 > 1500) {
        const left = ((now - t0) / (done - d0)) * (total - done) / 1000;
        extra += left >= 90 ? ` · about ${fmt(Math.round(left / 60))} min left` : ` · about ${fmt(Math.max(1, Math.round(left)))} s left`;
      }
      if (workers > 1) extra += ` · ${fmt(workers)} workers`;
      $('clu-progress-text').textContent = `${fmt(done)} / ${fmt(total)} simulations${extra}`;
    });
    state.job = job;
    try {
      const res = await job.promise;
      if (token !== state.runToken) return;
      state.result = res;
      state.job = null;
      setRun('done');
      $('clu-progress-text').textContent = `${fmt(res.n_sim)} simulations done`;
      renderResult();
      setStatus('Envelope test done.');
    } catch (err) {
      if (token !== state.runToken) return;
      state.job = null;
      if (err && err.code === 'cancelled') {
        setRun('cancelled');
        $('clu-progress-text').textContent = 'Cancelled.';
        setStatus('Envelope run cancelled.');
      } else {
        setRun('error');
        $('clu-progress-text').textContent = '';
        if (!(err && (err.code === 'no_job' || err.code === 'engine_stopped'))) showError('The envelope test could not run', err);
      }
    }
  }

  function cancel() {
    $('clu-estimate').hidden = true;
    if (state.job) {
      state.asking = null;
      state.job.cancel();
      return;
    }
    // Still measuring, or asking before the run: nothing runs yet.
    if (body.dataset.run === 'asking' || body.dataset.run === 'running') {
      state.asking = null;
      state.runToken++;
      setRun('cancelled');
      $('clu-progress-text').textContent = 'Cancelled.';
      setStatus('Envelope run cancelled.');
    }
  }

  /** "Run it" in the estimate box. */
  function goOn() {
    $('clu-estimate').hidden = true;
    const a = state.asking;
    state.asking = null;
    if (state.job) { state.job.resume(); return; }
    if (a && a.token === state.runToken) {
      setRun('running');
      startRun(a.token, a.params, state.estimate, false);
    }
  }

  function chartOptions() {
    return {
      view: $('clu-view').value,
      units: $('clu-units').value,
      band: $('clu-kind-pointwise').checked ? 'pointwise' : 'global',
    };
  }

  function drawChart() {
    const res = state.result;
    if (!res) return;
    const canvas = $('clu-chart');
    const dpr = C.sizeChart(canvas);
    try {
      const drawn = C.engine().drawEnvelopeChart('clu-chart', res, { ...chartOptions(), scale: dpr });
      canvas.dataset.drawn = '1';
      canvas.setAttribute('aria-label', `Envelope chart: ${drawn.y_label} against ${drawn.x_label}, observed curve, complete spatial randomness and ${drawn.band_label}`);
    } catch (err) {
      canvas.dataset.drawn = '0';
      showError('Could not draw the chart', err);
    }
    const pointwise = chartOptions().band === 'pointwise';
    $('clu-band-note').textContent = pointwise
      ? 'The shaded band is pointwise (the lowest and highest simulated value at each distance): it is not a test. A curve leaving it somewhere is expected by chance when many distances are looked at. The verdict below comes from the global test.'
      : `The shaded band is the global ${fmt(100 * (1 - res.alpha), 3)}% band: if the observed curve leaves it anywhere, the maximum-deviation test rejects chance at that level. Where it leaves shows the distances of the departure.`;
    const centredAvailable = res.function === 'l' || res.function === 'k';
    $('clu-view').disabled = !centredAvailable;
  }

  function renderResult() {
    const res = state.result;
    $('clu-env-result').hidden = !res;
    if (!res) return;
    const v = res.verdict;
    const verdict = $('clu-verdict');
    verdict.textContent = v.text;
    verdict.dataset.outcome = v.outcome;
    // The chart shows one band at a time, so the engine's '(lightest shading)' does not apply here.
    $('clu-caveats').replaceChildren(...v.caveats.map((c) => el('li', null, c.replace(' (lightest shading)', ''))));
    const mad = res.mad;
    const dclf = res.dclf;
    const corr = PAIR_FUNCTIONS.has(res.function) ? res.correction : res.nn_correction;
    dl($('clu-details'), [
      ['Function', `${res.label}, ${fmt(res.n)} events`],
      [C.term('mad', 'Maximum-deviation test'), `${pEq(mad.p_value)} (${fmt(mad.at_least_as_extreme)} of ${fmt(res.n_sim)} simulations at least as extreme)`, 'mad_p'],
      [C.term('dclf', 'Integrated-deviation test (DCLF)'), pEq(dclf.p_value), 'dclf_p'],
      ['Distances tested', `${fmtMetres(res.test_r_min)} to ${fmtMetres(res.test_r_max)}`],
      ['Largest distance', res.r_max_rule],
      ['Edge correction', ['isotropic', 'translation', 'border'].includes(String(corr)) ? C.term(String(corr), String(corr)) : String(corr)],
      ['Pair counting', pairCounting(res), 'estimator'],
      ['Simulations', fmt(res.n_sim)],
      ['Seed', String(res.seed), 'seed'],
      ['Smallest possible p', fmt(1 / (res.n_sim + 1), 3)],
    ]);
    $('clu-warnings').replaceChildren(...(res.warnings || []).map((w) => el('li', null, w)));
    drawChart();
  }

  /** The estimator in words: which, why, and for the grid its cell and stated error. */
  function pairCounting(res) {
    if (res.estimator !== 'binned') return res.estimator_reason;
    const pct = res.binned_relative_error === null ? '' : fmt(100 * res.binned_relative_error, 2);
    return `${res.estimator_reason}; cells of ${fmtMetres(res.cell_m)}; K and L within ${pct} % of counting every pair ` +
      `from ${fmtMetres(res.binned_error_from_m)} on (translation correction)`;
  }

  function csvText(res) {
    const head = ['r_m', 'observed', 'csr', 'global_low', 'global_high', 'pointwise_low', 'pointwise_high', 'simulation_mean'];
    const cols = [res.r, res.observed, res.theoretical, res.global_lo, res.global_hi, res.pointwise_lo, res.pointwise_hi, res.sim_mean];
    const cell = (x) => (x === null || x === undefined || !Number.isFinite(Number(x)) ? '' : String(Number(x)));
    const lines = [head.join(',')];
    for (let i = 0; i < res.r.length; i++) lines.push(cols.map((c) => cell(c[i])).join(','));
    return lines.join('\r\n') + '\r\n';
  }

  const fileName = (res, ext) => C.downloadName(`envelope-${res.function}-${res.n_sim}sims`, ext, res.seed);

  function saveCsv() {
    const res = state.result;
    if (!res) return;
    download(new Blob([csvText(res)], { type: 'text/csv;charset=utf-8' }), fileName(res, 'csv'));
    setStatus(`Saved ${fileName(res, 'csv')}.`);
  }

  async function savePng() {
    const res = state.result;
    if (!res) return;
    const blob = await new Promise((resolve, reject) => $('clu-chart').toBlob((b) => (b ? resolve(b) : reject({ message: 'the picture could not be made' })), 'image/png'));
    download(blob, fileName(res, 'png'));
    setStatus(`Saved ${fileName(res, 'png')}.`);
  }

  // ---------- quadrat and Clark–Evans ----------

  async function quadrat() {
    clearError();
    const out = $('clu-quad-result');
    let p;
    try {
      p = { n_sim: readInt('clu-quad-nsim', 'the number of simulations'), seed: randomSeed() };
      for (const [id, key] of [['clu-nx', 'nx'], ['clu-ny', 'ny']]) {
        if ($(id).value.trim() !== '') p[key] = readInt(id, key === 'nx' ? 'the number of columns' : 'the number of rows');
      }
    } catch (err) {
      showError('Could not run the quadrat test', err);
      return;
    }
    let res;
    try {
      res = await call('quadratTest', p);
    } catch (err) {
      out.replaceChildren();
      if (!(err && err.code === 'engine_stopped')) showError('The quadrat test could not run', err);
      return;
    }
    const s = res.stats;
    const d = el('dl', { class: 'clu-dl' });
    dl(d, [
      ['Grid', `${res.nx} × ${res.ny} cells of ${fmtMetres(res.cell_width_m)} × ${fmtMetres(res.cell_height_m)}; ${fmt(res.cells.length)} inside the area`, 'grid'],
      ['Chi-square', `${fmt(s.chi_square, 5)} on ${fmt(s.df)} degrees of freedom`, 'chi_square'],
      ['p (chi-square)', `${pText(s.p_two_sided)} two-sided; ${pText(s.p_upper)} for clustering, ${pText(s.p_lower)} for regularity`, 'p'],
      ['p (simulated)', res.p_mc_two_sided === null ? 'not computed (0 simulations)' : `${pText(res.p_mc_two_sided)} two-sided; ${pText(res.p_mc_upper)} for clustering (${fmt(res.n_sim)} simulations, seed ${res.seed})`, 'p_mc'],
      [C.term('dispersion', 'Variance / mean of counts'), `${fmt(s.dispersion_index, 4)} (about 1 under chance; above 1 clustered, below 1 regular)`, 'dispersion'],
    ]);
    // The engine's warnings say it once (the small-expected-count warning among them).
    const notes = Array.from(res.warnings || []);
    out.replaceChildren(d, notes.length ? el('ul', { class: 'clu-warnings', id: 'clu-quad-warnings' }, ...notes.map((n) => el('li', null, n))) : '');
    out.dataset.ready = '1';
  }

  async function clarkEvans() {
    clearError();
    const out = $('clu-ce-result');
    let p;
    try {
      p = { n_sim: readInt('clu-ce-nsim', 'the number of simulations'), seed: randomSeed() };
    } catch (err) {
      showError('Could not compute the Clark\u2013Evans ratio', err);
      return;
    }
    let res;
    try {
      res = await call('clarkEvans', p);
    } catch (err) {
      out.replaceChildren();
      if (!(err && err.code === 'engine_stopped')) showError('The Clark\u2013Evans ratio could not be computed', err);
      return;
    }
    const line = (s) => `R = ${fmt(s.r, 4)}, z = ${fmt(s.z, 4)}, ${pEq(s.p_two_sided)} (two-sided)`;
    const d = el('dl', { class: 'clu-dl' });
    dl(d, [
      ['Mean nearest-neighbour distance', `${fmtMetres(res.mean_nn_m)} (${fmt(res.n)} events)`, 'mean_nn'],
      [C.term('donnelly', 'With edge correction (Donnelly)'), line(res.donnelly), 'donnelly'],
      ['Without edge correction', line(res.naive), 'naive'],
      ['p (simulated in this area)', res.p_mc_two_sided === null ? 'not computed (0 simulations)' : `${pText(res.p_mc_two_sided)} two-sided; ${pText(res.p_mc_clustered)} for clustering (${fmt(res.n_sim)} simulations, seed ${res.seed})`, 'p_mc'],
    ]);
    out.replaceChildren(
      el('p', { class: 'hint' }, 'R below 1: events closer together than chance (clustered); above 1: more evenly spaced (regular).'),
      d,
      (res.warnings || []).length ? el('ul', { class: 'clu-warnings' }, ...res.warnings.map((w) => el('li', null, w))) : '');
    out.dataset.ready = '1';
  }

  // ---------- wiring ----------

  newSeed();
  fillCorrections();
  $('clu-function').addEventListener('change', fillCorrections);
  $('clu-correction').addEventListener('change', correctionChanged);
  $('clu-estimator').addEventListener('change', estimatorChanged);
  $('clu-seed').addEventListener('input', () => { $('clu-fresh').checked = false; });
  $('clu-run').addEventListener('click', () => { run(); });
  $('clu-cancel').addEventListener('click', cancel);
  $('clu-estimate-go').addEventListener('click', goOn);
  $('clu-estimate-stop').addEventListener('click', cancel);
  for (const id of ['clu-view', 'clu-units', 'clu-kind-global', 'clu-kind-pointwise']) $(id).addEventListener('change', drawChart);
  $('clu-csv').addEventListener('click', act(saveCsv));
  $('clu-png').addEventListener('click', act(savePng));
  $('clu-quad-run').addEventListener('click', act(quadrat));
  $('clu-ce-run').addEventListener('click', act(clarkEvans));
  let resizeTimer = 0;
  window.addEventListener('resize', () => {
    clearTimeout(resizeTimer);
    resizeTimer = setTimeout(drawChart, 150);
  });

  C.onSnapshot((snap) => {
    // New data: stop any run and clear every result of the old data.
    state.runToken++;
    if (state.job) state.job.cancel();
    state.job = null;
    state.asking = null;
    state.estimate = null;
    $('clu-estimate').hidden = true;
    $('clu-rmax').placeholder = 'automatic';
    $('clu-rmax').parentElement.querySelector('small').textContent = 'empty: chosen from the study area\u2019s shape';
    state.result = null;
    state.hasData = Boolean(snap && snap.study && snap.study.events > 0);
    setRun('idle');
    $('clu-progress-text').textContent = '';
    $('clu-env-result').hidden = true;
    $('clu-chart').dataset.drawn = '0';
    for (const id of ['clu-quad-result', 'clu-ce-result']) {
      $(id).replaceChildren();
      delete $(id).dataset.ready;
    }
    for (const id of ['clu-quad-run', 'clu-ce-run']) $(id).disabled = !state.hasData;
  });
}
