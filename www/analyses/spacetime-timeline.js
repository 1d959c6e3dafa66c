/* Cloister, "Close in space and time": time on the map. A bar chart of the
 * events per day, week or month (events known only within a from–to
 * window spread over the bars their window covers, drawn lighter), a date
 * range that the map honours (events outside it are not drawn), and a play
 * button that moves the range through time one bar at a time. Every count
 * comes from the engine (src/spacetime/timeline.rs, drawn by
 * src/plot/timeline.rs); this module keeps the range and tells the map
 * which events fall in it. Mounted by spacetime.js into its section. */

const DAY_MS = 86400000;
const SPEEDS = [['slow', 1200], ['normal', 600], ['fast', 250]];

/** Days since 1970-01-01 of a `YYYY-MM-DD` text, or NaN. */
function dayOf(text) {
  const t = Date.parse(`${text}T00:00:00Z`);
  return Number.isFinite(t) ? Math.round(t / DAY_MS) : NaN;
}
/** `YYYY-MM-DD` of a day number. */
function textOf(day) {
  return new Date(Math.floor(day) * DAY_MS).toISOString().slice(0, 10);
}

export function mountSpaceTimeTimeline(C, body) {
  const { el, fmt } = C;
  const $ = (id) => document.getElementById(id);
  const st = { curve: null, times: null, token: 0, timer: null, k: 0, nb: 0, from: NaN, to: NaN };
  const field = (label, input, hint) => el('label', { class: 'st-tl-field' }, el('span', null, label), input, hint ? el('small', null, hint) : null);

  const bin = el('select', { id: 'st-tl-bin' },
    el('option', { value: 'auto' }, 'chosen from the span'),
    el('option', { value: 'day' }, 'day'),
    el('option', { value: 'week' }, 'week (Monday to Sunday)'),
    el('option', { value: 'month' }, 'month'));
  const speed = el('select', { id: 'st-tl-speed' }, ...SPEEDS.map(([name, ms]) => el('option', { value: String(ms), selected: name === 'normal' }, name)));
  const box = el('fieldset', { class: 'st-tl', id: 'st-tl-box', disabled: true },
    el('legend', null, 'Time on the map'),
    el('p', { class: 'hint' },
      'How many events fell in each day, week or month. An event known only to lie between a "from" and a "to" date is shared out over the bars its window covers, in proportion to the overlap (aoristic shares, Ratcliffe 2000): the lighter part of a bar. ',
      'Choose a range of dates to show only those events on the map, or press Play to step through time.'),
    el('div', { class: 'st-tl-grid' },
      field('One bar per', bin),
      field('Map shows from', el('input', { type: 'date', id: 'st-tl-from' }), 'first day shown'),
      field('to', el('input', { type: 'date', id: 'st-tl-to' }), 'last day shown'),
      field('Play speed', speed, 'one bar per step')),
    el('div', { class: 'st-tl-actions' },
      el('button', { type: 'button', id: 'st-tl-play' }, 'Play'),
      el('button', { type: 'button', id: 'st-tl-all', class: 'quiet' }, 'Whole period'),
      el('span', { id: 'st-tl-shown', class: 'hint', 'aria-live': 'polite' })),
    el('div', { class: 'st-tl-chart-wrap' }, el('canvas', { id: 'st-tl-chart', width: 760, height: 360, role: 'img', tabindex: '0', 'aria-label': 'Time line chart' })),
    el('p', { id: 'st-tl-statement', class: 'hint' }),
    el('p', { id: 'st-tl-bintext', class: 'hint' }),
    el('p', { class: 'hint' },
      'A burst on the time line or a group of events on the map in a few weeks is not a cause: it may follow where and when people live, report or are counted. ',
      'The dates are as sensitive as the places: the usual rules on sharing apply to pictures of this chart and of the filtered map.'));
  body.append(box);

  const whole = () => !!st.curve && st.from <= st.curve.edges[0] && st.to >= st.curve.edges[st.curve.edges.length - 1];

  /** The mask of events whose time (or window) meets [from, to). */
  function applyFilter() {
    const t = st.times;
    if (!st.curve || !t) return;
    let shown;
    const n = t.start.length;
    if (whole()) {
      C.setEventFilter(null);
      shown = n;
    } else {
      const mask = new Uint8Array(n);
      shown = 0;
      for (let i = 0; i < n; i++) {
        const s = t.start[i];
        const e = t.end ? t.end[i] : NaN;
        const a = Number.isFinite(s) ? s : e;
        const b = Number.isFinite(e) ? e : s;
        if (Number.isFinite(a) && a < st.to && b >= st.from) { mask[i] = 1; shown++; }
      }
      C.setEventFilter(mask);
    }
    $('st-tl-from').value = textOf(st.from);
    $('st-tl-to').value = textOf(st.to - 1);
    const range = whole() ? 'the whole period' : `${textOf(st.from)} to ${textOf(st.to - 1)}`;
    $('st-tl-shown').textContent = `Map: ${fmt(shown)} of ${fmt(n)} events (${range}).`;
    $('st-tl-shown').dataset.shown = String(shown);
    drawChart();
  }

  function drawChart() {
    const canvas = $('st-tl-chart');
    const c = st.curve;
    if (!c) return;
    const dpr = C.sizeChart(canvas);
    try {
      const range = whole() ? {} : { from: st.from, to: st.to };
      C.engine().drawTimelineChart('st-tl-chart', { edges: c.edges, whole: c.whole, window_share: c.window_share, ...range, scale: dpr });
      canvas.dataset.drawn = '1';
      canvas.dataset.bars = String(c.whole.length);
      canvas.setAttribute('aria-label', `Time line: events per ${c.bin} from ${c.first_text} to ${c.last_text}, ${c.whole.length} bars, busiest bar ${fmt(c.max_bin, 3)} events${c.windows > 0 ? '; lighter parts are shares of events known only within a window' : ''}.`);
    } catch (err) {
      canvas.dataset.drawn = '0';
      C.showError('Could not draw the time line', err);
    }
  }

  function setRange(from, to) {
    const c = st.curve;
    const lo = c.edges[0];
    const hi = c.edges[c.edges.length - 1];
    st.from = Math.max(lo, Math.min(from, hi));
    st.to = Math.min(hi, Math.max(to, st.from + 1));
    applyFilter();
  }

  function stop(text) {
    if (st.timer !== null) clearInterval(st.timer);
    st.timer = null;
    $('st-tl-play').textContent = 'Play';
    $('st-tl-play').setAttribute('aria-pressed', 'false');
    if (text) C.setStatus(text);
  }

  /** One step: the range moves on by one bar; stops after the last. */
  function step() {
    const e = st.curve.edges;
    const m = e.length - 1;
    if (st.k + st.nb > m) { stop('The time line reached its end.'); return; }
    setRange(e[st.k], e[Math.min(m, st.k + st.nb)]);
    $('st-tl-box').dataset.step = String(st.k);
    st.k += 1;
    if (st.k + st.nb > m) stop('The time line reached its end.');
  }

  function play() {
    if (st.timer !== null) { stop('Paused.'); return; }
    const e = st.curve.edges;
    const m = e.length - 1;
    // The whole period plays one bar at a time from the first; a chosen
    // range keeps its width (in bars) and moves on from where it is.
    if (whole()) {
      st.k = 0;
      st.nb = 1;
    } else {
      let k = 0;
      while (k + 1 < m && e[k + 1] <= st.from) k++;
      let j = k + 1;
      while (j < m && e[j] < st.to) j++;
      st.k = k;
      st.nb = Math.max(1, j - k);
      // A range of every bar plays one bar at a time; one at the end starts again.
      if (st.nb >= m) st.nb = 1;
      if (st.k + st.nb >= m) st.k = 0;
    }
    $('st-tl-play').textContent = 'Pause';
    $('st-tl-play').setAttribute('aria-pressed', 'true');
    step();
    if (st.timer === null && st.k + st.nb <= m) st.timer = setInterval(step, Number(speed.value) || 600);
  }

  async function load() {
    const token = ++st.token;
    const wasWhole = !st.curve || whole();
    stop();
    try {
      const [curve, times] = await Promise.all([C.call('timeline', { bin: bin.value }), C.call('eventTimes')]);
      if (token !== st.token) return;
      st.curve = curve;
      st.times = times;
      $('st-tl-statement').textContent = curve.statement;
      $('st-tl-bintext').textContent = curve.bin_text;
      box.disabled = false;
      const lo = curve.edges[0];
      const hi = curve.edges[curve.edges.length - 1];
      for (const id of ['st-tl-from', 'st-tl-to']) {
        $(id).min = textOf(lo);
        $(id).max = textOf(hi - 1);
      }
      // A new bar length keeps the range; new data shows the whole period.
      if (!wasWhole && Number.isFinite(st.from) && st.from >= lo && st.to <= hi && st.to > st.from) setRange(st.from, st.to);
      else setRange(lo, hi);
    } catch (err) {
      if (token !== st.token) return;
      st.curve = null;
      if (!(err && (err.code === 'engine_stopped' || err.code === 'nothing_loaded'))) C.showError('Could not make the time line', err);
    }
  }

  bin.addEventListener('change', () => load());
  speed.addEventListener('change', () => {
    if (st.timer !== null) { clearInterval(st.timer); st.timer = setInterval(step, Number(speed.value) || 600); }
  });
  $('st-tl-play').addEventListener('click', () => play());
  $('st-tl-all').addEventListener('click', () => { stop(); setRange(-Infinity, Infinity); });
  const typed = () => {
    stop();
    const a = dayOf($('st-tl-from').value);
    const b = dayOf($('st-tl-to').value);
    if (!Number.isFinite(a) || !Number.isFinite(b)) return;
    if (b < a) { C.showError('Time range', { message: 'the "to" date is before the "from" date.' }); return; }
    setRange(a, b + 1);
  };
  $('st-tl-from').addEventListener('change', typed);
  $('st-tl-to').addEventListener('change', typed);

  C.onSnapshot((snap) => {
    const span = snap && snap.summary && snap.summary.time_span;
    stop();
    st.curve = null;
    st.times = null;
    st.from = NaN;
    st.to = NaN;
    C.setEventFilter(null);
    $('st-tl-shown').textContent = '';
    $('st-tl-chart').dataset.drawn = '0';
    if (!(span && span.n_with_time >= 1)) {
      st.token++;
      box.disabled = true;
      return;
    }
    load();
  });
}
