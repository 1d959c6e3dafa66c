/* Cloister, "Close in space and time": emerging clusters with the
 * space–time permutation scan (Kulldorff et al. 2005). Circles around
 * every event location × runs of days; each compared with what the
 * locations and the dates alone lead to expect; permutations of the dates
 * say how often chance gives as strong a cluster. Every number comes from
 * the engine (src/web/spacetime_scan.rs, src/spacetime/scan.rs); this
 * module lays out the options, the table and the circles on the map.
 * Mounted by spacetime.js into its section. */

// Colours of our own: the strongest cluster in deep teal, the others in
// a dashed ochre.
const MAIN = '#0f6e6a';
const OTHER = '#b0701a';

export function mountSpaceTimeScan(C, body) {
  const { el, fmt, showError, clearError } = C;
  const $ = (id) => document.getElementById(id);
  const state = { job: null, token: 0, result: null, ready: false };
  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const mode = el('select', { id: 'st-scan-mode' },
    el('option', { value: 'retrospective' }, 'any time in the data (retrospective)'),
    el('option', { value: 'prospective' }, 'ending on the last day (prospective)'));
  const box = el('fieldset', { class: 'clu-box', id: 'st-scan-box' },
    el('legend', null, 'Emerging clusters: where and when did events come together? (space\u2013time permutation scan)'),
    el('p', { class: 'hint' },
      'Circles around every event location, growing up to a limit, are combined with runs of consecutive days. ',
      'Each circle and period is compared with the number its locations and its days alone lead to expect ',
      '(its share of all events \u00d7 the period\u2019s share of all events). The dates are then shuffled among the events many times: ',
      'if the strongest circle and period of the data beats nearly all the shuffles, the events cluster in space and time together ',
      '(Kulldorff, Heffernan, Hartman, Assun\u00e7\u00e3o & Mostashari 2005). No population file is needed. Times count in whole days.'),
    el('div', { class: 'clu-grid' },
      field('Periods', mode, 'prospective: is something going on now?'),
      field('Largest circle (% of events)', el('input', { type: 'number', id: 'st-scan-share', value: '50', min: '1', max: '50', step: 'any' }), 'at most 50 %'),
      field('Largest radius (m)', el('input', { type: 'number', id: 'st-scan-radius', 'data-param': 'spaceTimeScanStart.max_radius_m', placeholder: 'no limit' }), 'empty = only the share limits circles'),
      field('Longest period (days)', el('input', { type: 'number', id: 'st-scan-days', 'data-param': 'spaceTimeScanStart.max_days', value: '30' }), 'time grows with its square (retrospective)'),
      field('Permutations', el('input', { type: 'number', id: 'st-scan-nsim', 'data-param': 'spaceTimeScanStart.n_sim', value: '999' }), '999 is usual'),
      field('Repeated every (days)', el('input', { type: 'number', id: 'st-scan-repeat', 'data-param': 'spaceTimeScanStart.repeat_days', value: '7' }), 'prospective: how often you run it'),
      field('Random seed', el('input', { type: 'text', id: 'st-scan-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'empty = a new one; type one to repeat a run')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'st-scan-run', disabled: true }, 'Run'),
      el('button', { type: 'button', id: 'st-scan-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'st-scan-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'st-scan-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'st-scan-result', class: 'clu-result', hidden: true },
      el('p', { id: 'st-scan-verdict', class: 'clu-verdict' }),
      el('table', { id: 'st-scan-table', class: 'small' },
        el('caption', null, 'Clusters in space and time (strongest first; the others share no place and day with a stronger one)'),
        el('thead', null, el('tr', { id: 'st-scan-head' })),
        el('tbody', { id: 'st-scan-rows' })),
      el('dl', { id: 'st-scan-details', class: 'clu-dl' }),
      el('ul', { id: 'st-scan-caveats', class: 'clu-caveats' }),
      el('div', { class: 'clu-actions' },
        field('Save clusters as', el('select', { id: 'st-scan-format' },
          el('option', { value: 'csv' }, 'CSV'), el('option', { value: 'geo_json' }, 'GeoJSON')), null),
        el('label', { class: 'clu-check' }, el('input', { type: 'checkbox', id: 'st-scan-internal' }),
          ' exact centres (event locations): internal use only'),
        el('button', { type: 'button', id: 'st-scan-save' }, 'Save clusters')),
      el('p', { class: 'hint', id: 'st-scan-save-note' },
        'Saved centres are moved to the nearest point of a 100 m grid, so no saved centre is an event\u2019s location; ',
        'the exact centres are written only when you tick the box, and the file then says it is for internal use only.')));
  body.append(box);

  function setRunning(on) {
    $('st-scan-run').disabled = on || !state.ready;
    $('st-scan-cancel').disabled = !on;
    $('st-scan-progress').hidden = !on;
  }

  function whole(id, name, what) {
    const v = Number($(id).value);
    const lim = C.param('spaceTimeScanStart', name);
    if (!(Number.isInteger(v) && v >= lim.min && v <= lim.max)) throw { message: `${what} must be a whole number from ${fmt(lim.min)} to ${fmt(lim.max)}.` };
    return v;
  }

  function readOptions() {
    const o = { mode: mode.value };
    const share = Number($('st-scan-share').value);
    if (!(share > 0 && share <= 50)) throw { message: 'the largest circle must be more than 0 and at most 50 % of the events.' };
    o.max_share = share / 100;
    const rad = $('st-scan-radius').value.trim();
    if (rad !== '') {
      const v = Number(rad);
      const lim = C.param('spaceTimeScanStart', 'max_radius_m');
      if (!(v > 0 && (lim.max == null || v <= lim.max))) throw { message: `the largest radius must be more than 0${lim.max == null ? '' : ` and at most ${fmt(lim.max)} m`}, or empty.` };
      o.max_radius_m = v;
    }
    o.max_days = whole('st-scan-days', 'max_days', 'the longest period');
    o.n_sim = whole('st-scan-nsim', 'n_sim', 'permutations');
    const rep = Number($('st-scan-repeat').value);
    const rl = C.param('spaceTimeScanStart', 'repeat_days');
    if (!(rep >= rl.min && rep <= rl.max)) throw { message: `the repeat interval must be from ${fmt(rl.min)} to ${fmt(rl.max)} days.` };
    o.repeat_days = rep;
    o.seed = C.readSeed($('st-scan-seed'));
    return o;
  }

  async function run() {
    clearError();
    let params;
    try {
      params = readOptions();
    } catch (err) {
      showError('Could not start the space-time scan', err);
      return;
    }
    state.result = null;
    render();
    await C.runPanelJob(state, { start: 'spaceTimeScanStart', step: 'spaceTimeScanStep', finish: 'spaceTimeScanFinish', params, parallel: { share: 'spaceTimeScanShare', helperStart: 'spaceTimeScanHelperStart', simulate: 'spaceTimeScanSimulate', add: 'spaceTimeScanAdd' } }, {
      progress: $('st-scan-progress'), text: $('st-scan-progress-text'), unit: 'permutations', running: setRunning,
      startText: 'Finding the circles and periods of the data\u2026', started: 'Shuffling the dates among the events\u2026',
      done: 'Space-time scan done.', cancelled: 'Space-time scan cancelled.', failed: 'The space-time scan could not run',
      result: (res) => { state.result = res; render(); },
    });
  }

  const pText = (p) => (p < 0.001 ? '< 0.001' : fmt(p, 3));
  const every = (days) => (days >= 730 ? `${fmt(days / 365.25, 2)} years` : days >= 14 ? `${fmt(days / 7, 3)} weeks` : `${fmt(days, 3)} days`);

  function render() {
    const res = state.result;
    $('st-scan-result').hidden = !res;
    drawMap();
    if (!res) return;
    const pro = res.mode === 'prospective';
    const v = $('st-scan-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    const heads = ['#', 'from', 'to', 'days', 'radius', 'events', 'expected', 'ratio', 'LLR', 'p'];
    if (pro) heads.push('by chance about once every');
    $('st-scan-head').replaceChildren(...heads.map((h, i) => el('th', { scope: 'col', class: i >= 3 ? 'n' : null }, h)));
    $('st-scan-rows').replaceChildren(...res.clusters.map((c) => el('tr', { 'data-small': c.p_value < 0.05 ? '1' : '0' },
      el('td', null, String(c.rank + 1)),
      el('td', null, c.start_date),
      el('td', null, c.end_date),
      el('td', { class: 'n' }, String(c.days)),
      el('td', { class: 'n' }, C.fmtMetres(c.radius_m)),
      el('td', { class: 'n' }, fmt(c.observed)),
      el('td', { class: 'n' }, fmt(c.expected, 3)),
      el('td', { class: 'n' }, fmt(c.ratio, 3)),
      el('td', { class: 'n' }, fmt(c.llr, 4)),
      el('td', { class: 'n' }, pText(c.p_value)),
      pro ? el('td', { class: 'n' }, every(c.recurrence_days)) : null)));
    $('st-scan-details').replaceChildren(...[
      ['Events, places, days', `${fmt(res.n_events)} events at ${fmt(res.n_locations)} places over ${fmt(res.n_days)} days (${res.first_date} to ${res.last_date})`],
      ['Times used', res.times.statement],
      ['Circles \u00d7 periods', `${fmt(res.n_circles)} circles \u00d7 ${fmt(res.n_intervals)} periods of 1 to ${fmt(res.max_days_used)} days${pro ? ' ending on the last day' : ''}`],
      pro && res.recurrence_days != null ? ['Recurrence interval', `${every(res.recurrence_days)} (repeated every ${fmt(res.repeat_days)} days, p = ${fmt(res.p_value, 4)})`] : null,
      ['Permutations', fmt(res.n_sim)],
      ['Seed', String(res.seed)],
      ['Smallest possible p', fmt(1 / (res.n_sim + 1), 3)],
    ].filter(Boolean).flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('st-scan-caveats').replaceChildren(...res.caveats.map((t) => el('li', null, t)));
  }

  function drawMap() {
    const r = state.result;
    if (!(r && r.clusters.length)) {
      C.setOverlay('spacetime-scan', null);
      return;
    }
    C.setOverlay('spacetime-scan', (ctx, geo) => {
      const list = r.clusters.filter((c) => c.rank === 0 || c.p_value < 0.05);
      for (let i = list.length - 1; i >= 0; i--) {
        const c = list[i];
        const main = c.rank === 0;
        const x = geo.toX(c.centre_x), y = geo.toY(c.centre_y);
        const rad = Math.max(c.radius_m * geo.k, 5 * geo.dpr);
        ctx.beginPath();
        ctx.arc(x, y, rad, 0, 2 * Math.PI);
        ctx.setLineDash(main ? [] : [7 * geo.dpr, 4 * geo.dpr]);
        ctx.lineWidth = 5 * geo.dpr;
        ctx.strokeStyle = 'rgba(255,255,255,0.85)';
        ctx.stroke();
        ctx.lineWidth = (main ? 3 : 2) * geo.dpr;
        ctx.strokeStyle = main ? MAIN : OTHER;
        ctx.stroke();
        ctx.setLineDash([]);
        const label = `${c.rank + 1}: ${c.start_date} \u2013 ${c.end_date}`;
        ctx.font = `${12 * geo.dpr}px system-ui, sans-serif`;
        ctx.lineWidth = 3 * geo.dpr;
        ctx.strokeStyle = 'rgba(255,255,255,0.9)';
        ctx.strokeText(label, x + rad + 4 * geo.dpr, y);
        ctx.fillStyle = main ? MAIN : OTHER;
        ctx.fillText(label, x + rad + 4 * geo.dpr, y);
      }
    }, [
      { label: 'Space-time scan: strongest cluster (with its dates)', colour: MAIN, kind: 'line' },
      { label: 'Space-time scan: next clusters with p < 0.05', colour: OTHER, kind: 'dash' },
    ]);
  }

  async function save() {
    clearError();
    try {
      const f = await C.call('spaceTimeScanExport', { format: $('st-scan-format').value, internal: $('st-scan-internal').checked });
      const url = URL.createObjectURL(new Blob([f.text], { type: `${f.mime};charset=utf-8` }));
      const a = el('a', { href: url, download: f.file_name, hidden: true });
      document.body.append(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(url), 30000);
      C.setStatus(`Saved ${f.file_name}.`);
    } catch (err) {
      showError('Could not save the clusters', err);
    }
  }

  $('st-scan-run').addEventListener('click', run);
  $('st-scan-cancel').addEventListener('click', () => { if (state.job) state.job.cancel(); });
  $('st-scan-save').addEventListener('click', C.act(save));

  C.onSnapshot((snap) => {
    state.token++;
    if (state.job) state.job.cancel();
    state.job = null;
    state.result = null;
    const span = snap && snap.summary && snap.summary.time_span;
    state.ready = !!(span && span.n_with_time >= 2);
    render();
    $('st-scan-progress-text').textContent = '';
    setRunning(false);
  });
}
