/* Cloister, "Close in space and time": the near-repeat table and the Knox
 * test. Pairs of events are sorted into distance bands × time bands and
 * each cell's count is compared with what permuting the dates gives. Every
 * number, label and sentence comes from the engine
 * (src/web/spacetime_pairs.rs, src/spacetime/pairs.rs); this module lays
 * out the controls, shades the table and offers the CSV. Mounted by
 * spacetime.js into its section. */

export function mountSpaceTimePairs(C, body) {
  const { el, fmt, showError, clearError } = C;
  const $ = (id) => document.getElementById(id);
  const table = { job: null, token: 0, result: null };
  const knox = { job: null, token: 0, result: null };
  let ready = false;
  const field = (label, input, hint) => el('label', { class: 'clu-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);
  const num = (id, param, value) => el('input', { type: 'number', id, 'data-param': param, value: String(value), step: 'any' });

  const box = el('fieldset', { class: 'clu-box', id: 'st-nr-box' },
    el('legend', null, 'After one event, are more events nearby soon after? (near repeats)'),
    el('p', { class: 'hint' },
      'Every pair of events is placed by how far apart they are (rows) and how many days apart (columns). ',
      'Each cell\u2019s count is compared with what shuffling the dates among the events gives: more pairs than that means events close in space also come close in time ',
      '(Townsley, Homel & Chaseling 2003; Johnson et al. 2007). Each band includes its upper end.'),
    el('div', { class: 'clu-grid' },
      field('Distance band', num('st-nr-band-m', 'nearRepeatStart.band_m', 100), 'metres per row'),
      field('Up to', num('st-nr-max-m', 'nearRepeatStart.max_distance_m', 500), 'metres; pairs further apart are in no row'),
      field('Time band', num('st-nr-band-days', 'nearRepeatStart.band_days', 7), 'days per column'),
      field('Up to', num('st-nr-max-days', 'nearRepeatStart.max_days', 42), 'days'),
      field('Same location row', el('input', { type: 'checkbox', id: 'st-nr-same', checked: true }), 'pairs at exactly the same place (needs exact addresses)'),
      field('Permutations', num('st-nr-nperm', 'nearRepeatStart.n_perm', 999), '999 is usual'),
      field('Events known only between two dates', el('select', { id: 'st-nr-uncertain' },
        el('option', { value: 'leave_out' }, 'left out if the window is long'),
        el('option', { value: 'midpoint' }, 'all at their window\u2019s middle')), 'shorter windows are placed at their middle'),
      field('Longest window', num('st-nr-window', 'nearRepeatStart.max_window_days', 7), 'days; longer windows are left out (first choice)'),
      field('Random seed', el('input', { type: 'text', id: 'st-nr-seed', inputmode: 'numeric', autocomplete: 'off', spellcheck: 'false' }), 'empty = a new one; type one to repeat a run')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'st-nr-run', disabled: true }, 'Run table'),
      el('button', { type: 'button', id: 'st-nr-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'st-nr-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'st-nr-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'st-nr-result', class: 'clu-result', hidden: true },
      el('p', { id: 'st-nr-verdict', class: 'clu-verdict' }),
      el('div', { class: 'st-nr-scroll' }, el('table', { id: 'st-nr-table', class: 'st-nr-grid' })),
      el('p', { class: 'hint', id: 'st-nr-key' },
        'Each cell: pairs observed, and below it observed \u00f7 expected. ',
        'Warm cells hold more pairs than chance gives, cool cells fewer; a dark outline marks cells still raised after the false-discovery correction (q at or below the level). ',
        'Hover a cell for its expected count, p and q.'),
      el('dl', { id: 'st-nr-details', class: 'clu-dl' }),
      el('div', { class: 'clu-actions' }, el('button', { type: 'button', id: 'st-nr-csv' }, 'Save table (CSV)')),
      el('ul', { id: 'st-nr-warnings', class: 'clu-warnings' }),
      el('ul', { id: 'st-nr-caveats', class: 'clu-caveats' })));

  const kbox = el('fieldset', { class: 'clu-box', id: 'st-knox-box' },
    el('legend', null, 'One distance, one time: the Knox test'),
    el('p', { class: 'hint' },
      'Counts the pairs of events that are both within the distance and within the days, against the count expected if dates were unrelated to places (Knox 1964; permutation p as Mantel 1967). Choose both before looking at the data.'),
    el('div', { class: 'clu-grid' },
      field('Within', num('st-knox-m', 'knoxStart.distance_m', 100), 'metres'),
      field('And within', num('st-knox-days', 'knoxStart.days', 7), 'days'),
      field('Permutations', num('st-knox-nperm', 'knoxStart.n_perm', 999), '999 is usual')),
    el('div', { class: 'clu-actions' },
      el('button', { type: 'button', id: 'st-knox-run', disabled: true }, 'Run Knox test'),
      el('button', { type: 'button', id: 'st-knox-cancel', class: 'quiet', disabled: true }, 'Cancel'),
      el('progress', { id: 'st-knox-progress', max: 1, value: 0, hidden: true }),
      el('span', { id: 'st-knox-progress-text', class: 'hint', 'aria-live': 'polite' })),
    el('div', { id: 'st-knox-result', class: 'clu-result', hidden: true },
      el('p', { id: 'st-knox-line', class: 'clu-verdict' }),
      el('dl', { id: 'st-knox-details', class: 'clu-dl' })));

  const caution = el('p', { class: 'hint st-nr-caution' },
    'Cautions: a near-repeat pattern is not a cause, it says only that events close in space also come close in time. ',
    'The "same location" row needs exact addresses, and masking or rounding destroys it. ',
    'Dates are when events were recorded, so reporting delays blur the time bands. Disclosure rules apply before a table is shared.');
  body.append(box, kbox, caution);

  function setRunning(which, on) {
    $(`st-${which}-run`).disabled = on || !ready;
    $(`st-${which}-cancel`).disabled = !on;
    $(`st-${which}-progress`).hidden = !on;
  }

  function readNumber(id, method, name, what) {
    const v = Number($(id).value);
    const lim = C.param(method, name);
    const whole = lim.kind === 'integer';
    if (!(Number.isFinite(v) && (!whole || Number.isInteger(v)) && v >= lim.min && v <= lim.max)) {
      throw { message: `${what} must be ${whole ? 'a whole number' : 'a number'} from ${fmt(lim.min)} to ${fmt(lim.max)}.` };
    }
    return v;
  }

  function timeOptions(method) {
    return {
      uncertain_times: $('st-nr-uncertain').value,
      max_window_days: readNumber('st-nr-window', method, 'max_window_days', 'The longest window'),
    };
  }

  function tableOptions() {
    const m = 'nearRepeatStart';
    return {
      band_m: readNumber('st-nr-band-m', m, 'band_m', 'The distance band'),
      max_distance_m: readNumber('st-nr-max-m', m, 'max_distance_m', 'The largest distance'),
      band_days: readNumber('st-nr-band-days', m, 'band_days', 'The time band'),
      max_days: readNumber('st-nr-max-days', m, 'max_days', 'The longest gap'),
      same_location: $('st-nr-same').checked,
      n_perm: readNumber('st-nr-nperm', m, 'n_perm', 'Permutations'),
      seed: C.readSeed($('st-nr-seed')),
      ...timeOptions(m),
    };
  }

  function knoxOptions() {
    const m = 'knoxStart';
    return {
      distance_m: readNumber('st-knox-m', m, 'distance_m', 'The distance'),
      days: readNumber('st-knox-days', m, 'days', 'The days'),
      n_perm: readNumber('st-knox-nperm', m, 'n_perm', 'Permutations'),
      seed: C.readSeed($('st-nr-seed')),
      ...timeOptions(m),
    };
  }

  async function runTable() {
    clearError();
    let params;
    try { params = tableOptions(); } catch (err) { showError('Could not start the near-repeat table', err); return; }
    await C.runPanelJob(table, { start: 'nearRepeatStart', step: 'nearRepeatStep', finish: 'nearRepeatFinish', params,
      parallel: { share: 'nearRepeatShare', helperStart: 'nearRepeatHelperStart', simulate: 'nearRepeatSimulate', add: 'nearRepeatAdd' } }, {
      progress: $('st-nr-progress'), text: $('st-nr-progress-text'), unit: 'permutations', running: (on) => setRunning('nr', on),
      startText: 'Finding the pairs of events within the largest distance\u2026', started: 'Permuting the dates\u2026',
      done: 'Near-repeat table done.', cancelled: 'Near-repeat table cancelled.', failed: 'The near-repeat table could not run',
      result: (res) => { table.result = res; $('st-nr-progress-text').textContent = `${fmt(res.n_perm)} permutations done`; renderTable(); },
    });
  }

  async function runKnox() {
    clearError();
    let params;
    try { params = knoxOptions(); } catch (err) { showError('Could not start the Knox test', err); return; }
    await C.runPanelJob(knox, { start: 'knoxStart', step: 'knoxStep', finish: 'knoxFinish', params,
      parallel: { share: 'knoxShare', helperStart: 'knoxHelperStart', simulate: 'knoxSimulate', add: 'knoxAdd' } }, {
      progress: $('st-knox-progress'), text: $('st-knox-progress-text'), unit: 'permutations', running: (on) => setRunning('knox', on),
      startText: 'Counting close pairs\u2026', started: 'Permuting the dates\u2026',
      done: 'Knox test done.', cancelled: 'Knox test cancelled.', failed: 'The Knox test could not run',
      result: (res) => { knox.result = res; $('st-knox-progress-text').textContent = `${fmt(res.n_perm)} permutations done`; renderKnox(); },
    });
  }

  const pText = (p) => (p < 0.001 ? '< 0.001' : fmt(p, 3));

  /** Fill and text colour of a cell: warm above a ratio of 1, cool below,
   * stronger the further from 1 (log scale, full at ×4 or ÷4). The text is
   * black or white, whichever contrasts more with the fill (relative
   * luminance as WCAG defines it; the better of the two is always ≥ 4.5:1). */
  function shade(ratio) {
    if (ratio === null) return { bg: 'rgb(244, 244, 244)', fg: '#000' };
    const s = Math.max(-1, Math.min(1, Math.log2(Math.max(ratio, 1e-6)) / 2));
    const [h, sat, l] = [s >= 0 ? 24 : 200, s >= 0 ? 0.85 : 0.6, 0.97 - 0.55 * Math.abs(s)];
    const f = (n) => {
      const k = (n + h / 30) % 12;
      return l - sat * Math.min(l, 1 - l) * Math.max(-1, Math.min(k - 3, 9 - k, 1));
    };
    const rgb = [f(0), f(8), f(4)];
    const lin = rgb.map((v) => (v <= 0.03928 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4));
    const L = 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2];
    const white = 1.05 / (L + 0.05);
    const black = (L + 0.05) / 0.05;
    return { bg: `rgb(${rgb.map((v) => Math.round(v * 255)).join(', ')})`, fg: white > black ? '#fff' : '#000' };
  }

  function renderTable() {
    const res = table.result;
    $('st-nr-result').hidden = !res;
    if (!res) return;
    const v = $('st-nr-verdict');
    v.textContent = res.verdict;
    v.dataset.outcome = res.outcome;
    const nt = res.time_bands.length;
    const head = el('tr', null, el('th', { scope: 'col' }, 'distance \\ days apart'),
      ...res.time_bands.map((b) => el('th', { scope: 'col', title: `${fmt(b.pairs)} pairs of all events` }, b.label)));
    const rows = res.space_bands.map((sb, a) => el('tr', null,
      el('th', { scope: 'row', title: `${fmt(sb.pairs)} pairs` }, sb.label),
      ...res.cells.slice(a * nt, (a + 1) * nt).map((c) => {
        const { bg, fg } = shade(c.ratio);
        return el('td', {
          class: c.raised ? 'st-nr-cell raised' : 'st-nr-cell',
          style: `background:${bg};color:${fg}`,
          'data-q': String(c.q_value),
          title: `${sb.label}, ${res.time_bands[c.time].label}: ${fmt(c.observed)} pairs, ${fmt(c.expected, 2)} expected (permuted mean ${fmt(c.sim_mean, 2)}); p = ${pText(c.p_value)}, q = ${pText(c.q_value)}`,
        }, el('span', { class: 'o' }, fmt(c.observed)), el('span', { class: 'r' }, c.ratio === null ? '\u2013' : `\u00d7${fmt(c.ratio, 2)}`));
      })));
    $('st-nr-table').replaceChildren(el('caption', null, 'Pairs of events by distance (rows) and days apart (columns)'), el('thead', null, head), el('tbody', null, ...rows));
    const g = res.global;
    $('st-nr-details').replaceChildren(...[
      ['Test over the whole table', g.max_z === null ? 'not defined (no cell can vary)'
        : `${g.p_value < 0.001 ? 'p < 0.001' : `p = ${fmt(g.p_value, 3)}`} (largest standardised cell ${fmt(g.max_z, 2)}: ${res.space_bands[g.at[0]].label}, ${res.time_bands[g.at[1]].label}; ${fmt(g.at_least_as_extreme)} of ${fmt(res.n_perm)} permutations at least as large)`],
      ['Events', res.time_use.statement],
      ['Pairs', `${fmt(res.close_pairs)} within ${res.space_bands[res.space_bands.length - 1].label.replace(/^.*\u2013/, '')} of ${fmt(res.n_pairs)} in all`],
      ['Permutations', fmt(res.n_perm)],
      ['Seed', String(res.seed)],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
    $('st-nr-warnings').replaceChildren(...(res.warnings || []).map((w) => el('li', null, w)));
    $('st-nr-caveats').replaceChildren(...res.caveats.map((t) => el('li', null, t)));
  }

  function renderKnox() {
    const r = knox.result;
    $('st-knox-result').hidden = !r;
    if (!r) return;
    $('st-knox-line').textContent = r.verdict;
    $('st-knox-details').replaceChildren(...[
      ['Pairs close in both (X)', fmt(r.x)],
      ['Close in space, in time, all pairs', `${fmt(r.n_s)}, ${fmt(r.n_t)}, ${fmt(r.n_pairs)}`],
      ['Expected', fmt(r.expected, 2)],
      ['Ratio', r.ratio === null ? '\u2013' : fmt(r.ratio, 3)],
      ['Permutation p', `${pText(r.p_value)} (${fmt(r.at_least_as_extreme)} of ${fmt(r.n_perm)} at least as many)`],
      ['Poisson p (approximate)', pText(r.p_poisson)],
      ['Events', r.time_use.statement],
      ['Seed', String(r.seed)],
    ].flatMap(([k, val]) => [el('dt', null, k), el('dd', null, val)]));
  }

  function download(text, name) {
    const url = URL.createObjectURL(new Blob([text], { type: 'text/csv;charset=utf-8' }));
    const a = el('a', { href: url, download: name, hidden: true });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 30000);
  }

  $('st-nr-run').addEventListener('click', runTable);
  $('st-nr-cancel').addEventListener('click', () => { if (table.job) table.job.cancel(); });
  $('st-knox-run').addEventListener('click', runKnox);
  $('st-knox-cancel').addEventListener('click', () => { if (knox.job) knox.job.cancel(); });
  $('st-nr-csv').addEventListener('click', C.act(async () => {
    try {
      const text = await C.call('nearRepeatCsv');
      download(text, C.downloadName('near-repeat-table', 'csv', table.result ? table.result.seed : undefined));
      C.setStatus('Table saved (counts of pairs per band; no location).');
    } catch (err) {
      showError('Could not save the table', err);
    }
  }));

  C.onSnapshot((snap) => {
    for (const p of [table, knox]) {
      p.token++;
      if (p.job) p.job.cancel();
      p.job = null;
      p.result = null;
    }
    const span = snap && snap.summary && snap.summary.time_span;
    ready = Boolean(span && span.n_with_time >= 3);
    $('st-nr-result').hidden = true;
    $('st-knox-result').hidden = true;
    $('st-nr-progress-text').textContent = '';
    $('st-knox-progress-text').textContent = '';
    setRunning('nr', false);
    setRunning('knox', false);
  });
}
