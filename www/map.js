/* Cloister map: draws events, controls, the study area, the mean centre and
 * the standard deviational ellipse on a canvas, in planar metres with north up.
 * Drawing only: every number shown comes from the engine (worker).
 * An ES module: exports PointMap and CLOISTER_PALETTE. */

/* Category colours, chosen for this tool by a max-min search over sRGB: every
 * pair stays apart (CIELAB ΔE ≥ 15) for normal vision and when protanopia,
 * deuteranopia or tritanopia is simulated, and every colour stands out from
 * the area fill, the controls' grey and white (tests/e2e/palette.test.mjs).
 * `other` collects categories beyond the sixth. */
export const CLOISTER_PALETTE = {
  categories: ['#1e69b4', '#e1872d', '#960000', '#c39669', '#3ca5ff', '#781e78'],
  other: '#555555',
  single: '#1e69b4',
  control: '#a3a9b0',
  areaFill: '#e9efe4',
  areaLine: '#56624a',
  ellipse: '#7a1f4f',
  centre: '#111111',
  background: '#f7f8f6',
};

export class PointMap {
  /** @param {HTMLCanvasElement} canvas */
  constructor(canvas) {
    this.canvas = canvas;
    this.ctx = canvas.getContext('2d');
    this.layers = null;
    this.overlays = new Map();
    this.showControls = true;
    this.view = null; // {cx, cy, scale} scale = CSS pixels per metre
    this.fitScale = 1;
    this.frame = 0;
    this.drag = null;
    this.onViewChange = null;
    this.lastDrawn = { events: 0, controls: 0 };
    // Which events are drawn (a Uint8Array, 1 = drawn, in the order of
    // layers.events), or null for all: the time filter sets it.
    this.eventMask = null;

    canvas.addEventListener('pointerdown', (e) => this.pointerDown(e));
    canvas.addEventListener('pointermove', (e) => this.pointerMove(e));
    canvas.addEventListener('pointerup', (e) => this.pointerUp(e));
    canvas.addEventListener('pointercancel', (e) => this.pointerUp(e));
    canvas.addEventListener('wheel', (e) => this.wheel(e), { passive: false });
    canvas.addEventListener('dblclick', (e) => {
      const p = this.cssPoint(e);
      this.zoomBy(2, p.x, p.y);
    });
    canvas.addEventListener('keydown', (e) => this.key(e));
    if (typeof ResizeObserver === 'function') {
      new ResizeObserver(() => this.redraw()).observe(canvas);
    } else {
      window.addEventListener('resize', () => this.redraw());
    }
  }

  /** Colour of category index i (index into category_names). */
  static categoryColour(i, count) {
    const pal = CLOISTER_PALETTE.categories;
    if (count <= pal.length) return pal[i % pal.length];
    return i < pal.length - 1 ? pal[i] : CLOISTER_PALETTE.other;
  }

  /** New data. The view is kept only when asked and the extent is unchanged. */
  /** Adds, replaces or (draw = null) removes a named overlay. */
  setOverlay(name, draw, legend) {
    if (!this.overlays) this.overlays = new Map();
    if (draw) this.overlays.set(name, { draw, legend: legend || [] });
    else this.overlays.delete(name);
    this.redraw();
  }

  /** The overlay that hides everything else (the sharing view's "only what
   * would be shared"), or null: while it is set no other layer or overlay is
   * drawn or listed, so a picture of the map holds only what it shows. */
  exclusiveOverlay() {
    for (const [name, o] of this.overlays || []) if (o.legend.some((item) => item.hidesBase)) return name;
    return null;
  }

  /** Legend entries of the overlays that are drawn. */
  overlayLegend() {
    const only = this.exclusiveOverlay();
    const out = [];
    for (const [name, o] of this.overlays || []) if (!only || name === only) out.push(...o.legend);
    return out;
  }

  /** Draws only the events whose entry in `mask` (one per event, in the
   * order of layers.events) is non-zero; null draws every event. A mask
   * of another length than the events is ignored (new data came in). */
  setEventFilter(mask) {
    this.eventMask = mask || null;
    this.redraw();
  }

  /** The filter in force for the current events, or null. */
  activeMask() {
    const m = this.eventMask;
    const ev = this.layers && this.layers.events;
    return m && ev && m.length === ev.length >> 1 ? m : null;
  }

  setLayers(layers, keepView) {
    const before = this.bbox();
    this.layers = layers;
    const after = this.bbox();
    const same = before && after && before.every((v, i) => Math.abs(v - after[i]) <= 1e-9 * (1 + Math.abs(v)));
    if (!keepView || !this.view || !same) this.resetView();
    else this.redraw();
  }

  clear() {
    this.layers = null;
    this.view = null;
    this.redraw();
  }

  hasData() {
    return !!(this.layers && this.layers.events && this.layers.events.length >= 2);
  }

  bbox() {
    const L = this.layers;
    if (!L) return null;
    let b = Array.isArray(L.bbox) || ArrayBuffer.isView(L.bbox) ? Array.from(L.bbox) : null;
    if (!b || b.length !== 4 || !b.every(Number.isFinite)) {
      b = [Infinity, Infinity, -Infinity, -Infinity];
      const ev = L.events || [];
      for (let i = 0; i + 1 < ev.length; i += 2) {
        if (ev[i] < b[0]) b[0] = ev[i];
        if (ev[i] > b[2]) b[2] = ev[i];
        if (ev[i + 1] < b[1]) b[1] = ev[i + 1];
        if (ev[i + 1] > b[3]) b[3] = ev[i + 1];
      }
      if (!b.every(Number.isFinite)) return null;
    }
    return b;
  }

  cssSize() {
    return { w: this.canvas.clientWidth || 1, h: this.canvas.clientHeight || 1 };
  }

  resetView() {
    const b = this.bbox();
    if (!b) {
      this.view = null;
      this.redraw();
      return;
    }
    const { w, h } = this.cssSize();
    const bw = Math.max(b[2] - b[0], 1);
    const bh = Math.max(b[3] - b[1], 1);
    const pad = 0.07;
    const scale = Math.min((w * (1 - 2 * pad)) / bw, (h * (1 - 2 * pad)) / bh);
    this.fitScale = scale;
    this.view = { cx: (b[0] + b[2]) / 2, cy: (b[1] + b[3]) / 2, scale };
    this.redraw();
  }

  zoomBy(factor, px, py) {
    if (!this.view) return;
    const { w, h } = this.cssSize();
    if (px === undefined) { px = w / 2; py = h / 2; }
    const v = this.view;
    const next = Math.min(Math.max(v.scale * factor, this.fitScale / 50), this.fitScale * 20000);
    // Keep the world point under (px, py) fixed.
    const wx = v.cx + (px - w / 2) / v.scale;
    const wy = v.cy - (py - h / 2) / v.scale;
    v.scale = next;
    v.cx = wx - (px - w / 2) / next;
    v.cy = wy + (py - h / 2) / next;
    this.redraw();
  }

  panBy(dx, dy) {
    if (!this.view) return;
    this.view.cx -= dx / this.view.scale;
    this.view.cy += dy / this.view.scale;
    this.redraw();
  }

  cssPoint(e) {
    const r = this.canvas.getBoundingClientRect();
    return { x: e.clientX - r.left, y: e.clientY - r.top };
  }

  pointerDown(e) {
    if (e.button !== 0 || !this.view) return;
    this.canvas.setPointerCapture(e.pointerId);
    this.drag = { id: e.pointerId, x: e.clientX, y: e.clientY };
    this.canvas.classList.add('dragging');
  }

  pointerMove(e) {
    if (!this.drag || e.pointerId !== this.drag.id) return;
    const dx = e.clientX - this.drag.x;
    const dy = e.clientY - this.drag.y;
    this.drag.x = e.clientX;
    this.drag.y = e.clientY;
    this.panBy(dx, dy);
  }

  pointerUp(e) {
    if (!this.drag || e.pointerId !== this.drag.id) return;
    this.drag = null;
    this.canvas.classList.remove('dragging');
  }

  wheel(e) {
    if (!this.view) return;
    e.preventDefault();
    const unit = e.deltaMode === 1 ? 30 : e.deltaMode === 2 ? 300 : 1;
    const factor = Math.exp((-e.deltaY * unit) * 0.0015);
    const p = this.cssPoint(e);
    this.zoomBy(factor, p.x, p.y);
  }

  key(e) {
    if (!this.view || e.altKey || e.ctrlKey || e.metaKey) return;
    const step = 60;
    let handled = true;
    switch (e.key) {
      case 'ArrowLeft': this.panBy(step, 0); break;
      case 'ArrowRight': this.panBy(-step, 0); break;
      case 'ArrowUp': this.panBy(0, step); break;
      case 'ArrowDown': this.panBy(0, -step); break;
      case '+': case '=': this.zoomBy(1.5); break;
      case '-': case '_': this.zoomBy(1 / 1.5); break;
      case '0': this.resetView(); break;
      default: handled = false;
    }
    if (handled) e.preventDefault();
  }

  redraw() {
    if (this.frame) return;
    this.frame = requestAnimationFrame(() => {
      this.frame = 0;
      this.render();
    });
  }

  /** Draws now (tests and first paint); normally use redraw(). */
  render() {
    const canvas = this.canvas;
    const dpr = window.devicePixelRatio || 1;
    const { w, h } = this.cssSize();
    const W = Math.max(1, Math.round(w * dpr));
    const H = Math.max(1, Math.round(h * dpr));
    if (canvas.width !== W || canvas.height !== H) {
      canvas.width = W;
      canvas.height = H;
    }
    const ctx = this.ctx;
    ctx.setTransform(1, 0, 0, 1, 0, 0);
    ctx.globalAlpha = 1;
    ctx.fillStyle = CLOISTER_PALETTE.background;
    ctx.fillRect(0, 0, W, H);
    this.lastDrawn = { events: 0, controls: 0 };
    if (!this.layers || !this.view) return;

    const v = this.view;
    const k = v.scale * dpr;
    const ox = W / 2 - v.cx * k;
    const oy = H / 2 + v.cy * k;
    const L = this.layers;

    // Study area: fill with holes (even-odd), outline drawn after the points.
    const area = Array.isArray(L.area) ? L.area : [];
    const areaPath = new Path2D();
    let hasArea = false;
    for (const poly of area) {
      for (const ring of poly) {
        if (!ring || ring.length < 2) continue;
        hasArea = true;
        areaPath.moveTo(ox + ring[0][0] * k, oy - ring[0][1] * k);
        for (let i = 1; i < ring.length; i++) areaPath.lineTo(ox + ring[i][0] * k, oy - ring[i][1] * k);
        areaPath.closePath();
      }
    }
    if (hasArea) {
      ctx.fillStyle = CLOISTER_PALETTE.areaFill;
      ctx.fill(areaPath, 'evenodd');
    }

    const ev = L.events || new Float64Array(0);
    const nEvents = ev.length >> 1;
    const ctl = this.showControls && L.controls ? L.controls : null;
    const nControls = ctl ? ctl.length >> 1 : 0;
    const total = nEvents + nControls;
    // Square size in CSS px: larger when there are few points.
    const cssSize = total <= 2000 ? 5 : total <= 20000 ? 4 : total <= 200000 ? 3 : 2;
    const size = Math.max(2, Math.round(cssSize * dpr));
    const ctlSize = Math.max(2, Math.round((cssSize - 1) * dpr));

    const colours = this.eventColours();
    const cat = L.event_category || null;
    const mask = this.activeMask();
    if (total <= DENSE_ABOVE) {
      this.lastDrawn = this.drawSquaresPath(ctx, ox, oy, k, ev, cat, colours, ctl, size, ctlSize, W, H, mask);
    } else {
      this.lastDrawn = this.drawSquaresImage(ctx, ox, oy, k, ev, cat, colours, ctl, size, ctlSize, W, H, mask);
    }
    // For people reading the page's state (and its tests): events drawn now.
    this.canvas.dataset.eventsDrawn = String(this.lastDrawn.events);
    this.canvas.dataset.timeFiltered = mask ? '1' : '0';

    if (hasArea) {
      ctx.lineWidth = Math.max(1, 1.5 * dpr);
      ctx.strokeStyle = CLOISTER_PALETTE.areaLine;
      ctx.stroke(areaPath);
    }

    // Standard deviational ellipse.
    const ell = Array.isArray(L.ellipse) ? L.ellipse : [];
    if (ell.length > 2) {
      ctx.beginPath();
      ctx.moveTo(ox + ell[0][0] * k, oy - ell[0][1] * k);
      for (let i = 1; i < ell.length; i++) ctx.lineTo(ox + ell[i][0] * k, oy - ell[i][1] * k);
      ctx.closePath();
      ctx.setLineDash([6 * dpr, 4 * dpr]);
      ctx.lineWidth = 2 * dpr;
      ctx.strokeStyle = '#ffffff';
      ctx.lineWidth = 4 * dpr;
      ctx.globalAlpha = 0.7;
      ctx.stroke();
      ctx.globalAlpha = 1;
      ctx.lineWidth = 2 * dpr;
      ctx.strokeStyle = CLOISTER_PALETTE.ellipse;
      ctx.stroke();
      ctx.setLineDash([]);
    }

    // Mean centre: a cross with a white halo.
    const mc = L.mean_centre;
    if (mc && Number.isFinite(mc[0]) && Number.isFinite(mc[1])) {
      const cx = ox + mc[0] * k;
      const cy = oy - mc[1] * k;
      const r = 11 * dpr;
      ctx.lineCap = 'round';
      for (const [col, lw] of [['#ffffff', 6 * dpr], [CLOISTER_PALETTE.centre, 2.5 * dpr]]) {
        ctx.strokeStyle = col;
        ctx.lineWidth = lw;
        ctx.beginPath();
        ctx.moveTo(cx - r, cy); ctx.lineTo(cx + r, cy);
        ctx.moveTo(cx, cy - r); ctx.lineTo(cx, cy + r);
        ctx.moveTo(cx + r * 0.55, cy);
        ctx.arc(cx, cy, r * 0.55, 0, 2 * Math.PI);
        ctx.stroke();
      }
      ctx.lineCap = 'butt';
    }

    // Analysis overlays (surfaces, clusters, circles, masked points), in the
    // order they were added; each draws in device pixels.
    const geo = { toX: (x) => ox + x * k, toY: (y) => oy - y * k, k, dpr, W, H };
    const only = this.exclusiveOverlay();
    for (const [name, o] of this.overlays) {
      if (only && name !== only) continue;
      ctx.save();
      try { o.draw(ctx, geo); } catch (err) { console.error(`overlay ${name}:`, err); }
      ctx.restore();
    }

    ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
    this.drawScaleBar(ctx, w, h, v.scale);
    this.drawNorth(ctx, w);
    ctx.setTransform(1, 0, 0, 1, 0, 0);
  }

  eventColours() {
    const L = this.layers;
    const names = (L && L.category_names) || [];
    if (!L || !L.event_category || names.length === 0) return [CLOISTER_PALETTE.single];
    return names.map((_, i) => PointMap.categoryColour(i, names.length));
  }

  drawSquaresPath(ctx, ox, oy, k, ev, cat, colours, ctl, size, ctlSize, W, H, mask) {
    const half = size / 2;
    let drawnControls = 0;
    let drawnEvents = 0;
    if (ctl) {
      ctx.fillStyle = CLOISTER_PALETTE.control;
      const ch = ctlSize / 2;
      for (let i = 0; i + 1 < ctl.length; i += 2) {
        const x = ox + ctl[i] * k;
        const y = oy - ctl[i + 1] * k;
        if (x < -ctlSize || y < -ctlSize || x > W + ctlSize || y > H + ctlSize) continue;
        ctx.fillRect(Math.round(x - ch), Math.round(y - ch), ctlSize, ctlSize);
        drawnControls++;
      }
    }
    // A thin white edge keeps neighbouring squares apart.
    const edge = Math.max(1, Math.round(size / 5));
    ctx.fillStyle = '#ffffff';
    for (let i = 0, j = 0; i + 1 < ev.length; i += 2, j++) {
      if (mask && !mask[j]) continue;
      const x = ox + ev[i] * k;
      const y = oy - ev[i + 1] * k;
      if (x < -size || y < -size || x > W + size || y > H + size) continue;
      ctx.fillRect(Math.round(x - half) - edge, Math.round(y - half) - edge, size + 2 * edge, size + 2 * edge);
    }
    for (let c = 0; c < colours.length; c++) {
      ctx.fillStyle = colours[c];
      for (let i = 0, j = 0; i + 1 < ev.length; i += 2, j++) {
        if (colours.length > 1 && cat && cat[j] !== c) continue;
        if (mask && !mask[j]) continue;
        const x = ox + ev[i] * k;
        const y = oy - ev[i + 1] * k;
        if (x < -size || y < -size || x > W + size || y > H + size) continue;
        ctx.fillRect(Math.round(x - half), Math.round(y - half), size, size);
        drawnEvents++;
      }
      if (colours.length === 1) break;
    }
    return { events: drawnEvents, controls: drawnControls };
  }

  /** Many points (above 20,000): the map is cut into squares of one dot's
   * size, and each square holding events is painted once, in the colour of
   * its most frequent category, more opaque the more events it holds
   * (opacity 0.3 for one event up to 1 at the 99th percentile of the counts,
   * on a log scale), so dense places stand out instead of merging into one
   * solid area. Controls are drawn under them as plain squares. */
  drawSquaresImage(ctx, ox, oy, k, ev, cat, colours, ctl, size, ctlSize, W, H, mask) {
    const img = ctx.getImageData(0, 0, W, H);
    const px = new Uint32Array(img.data.buffer);
    const ctlColour = packColour(CLOISTER_PALETTE.control);
    let drawnControls = 0;
    let drawnEvents = 0;
    if (ctl) {
      for (let i = 0; i + 1 < ctl.length; i += 2) {
        if (fillSquare(px, W, H, ox + ctl[i] * k, oy - ctl[i + 1] * k, ctlSize, ctlColour)) drawnControls++;
      }
    }
    const bw = Math.ceil(W / size);
    const bh = Math.ceil(H / size);
    const nc = Math.max(1, colours.length);
    const counts = new Uint32Array(bw * bh);
    const byCat = nc > 1 ? new Uint32Array(bw * bh * nc) : null;
    for (let i = 0, j = 0; i + 1 < ev.length; i += 2, j++) {
      if (mask && !mask[j]) continue;
      const x = ox + ev[i] * k;
      const y = oy - ev[i + 1] * k;
      if (!(x >= 0 && x < W && y >= 0 && y < H)) continue;
      const b = Math.floor(y / size) * bw + Math.floor(x / size);
      counts[b]++;
      if (byCat) byCat[b * nc + Math.min(cat ? cat[j] : 0, nc - 1)]++;
      drawnEvents++;
    }
    // The counts of the squares holding events, sorted as numbers: a typed
    // array sorts without calling a comparison function, which at a
    // million events is ten times faster than Array.prototype.sort.
    let nFilled = 0;
    for (let b = 0; b < counts.length; b++) if (counts[b] > 0) nFilled++;
    if (nFilled === 0) {
      ctx.putImageData(img, 0, 0);
      return { events: 0, controls: drawnControls };
    }
    const filled = new Uint32Array(nFilled);
    for (let b = 0, m = 0; b < counts.length; b++) if (counts[b] > 0) filled[m++] = counts[b];
    filled.sort();
    const top = Math.max(2, filled[Math.min(filled.length - 1, Math.floor(filled.length * 0.99))]);
    const rgb = colours.map((h) => [parseInt(h.slice(1, 3), 16), parseInt(h.slice(3, 5), 16), parseInt(h.slice(5, 7), 16)]);
    const bytes = img.data;
    for (let by = 0; by < bh; by++) {
      for (let bx = 0; bx < bw; bx++) {
        const b = by * bw + bx;
        const c = counts[b];
        if (c === 0) continue;
        let ci = 0;
        if (byCat) {
          for (let q = 1; q < nc; q++) if (byCat[b * nc + q] > byCat[b * nc + ci]) ci = q;
        }
        const a = Math.min(1, DENSE_MIN_ALPHA + (1 - DENSE_MIN_ALPHA) * Math.log1p(c - 1) / Math.log1p(top - 1));
        const [r, g, bl] = rgb[ci] || rgb[0];
        const y1 = Math.min(H, (by + 1) * size);
        const x1 = Math.min(W, (bx + 1) * size);
        for (let yy = by * size; yy < y1; yy++) {
          for (let xx = bx * size; xx < x1; xx++) {
            const o = (yy * W + xx) * 4;
            bytes[o] = Math.round(bytes[o] * (1 - a) + r * a);
            bytes[o + 1] = Math.round(bytes[o + 1] * (1 - a) + g * a);
            bytes[o + 2] = Math.round(bytes[o + 2] * (1 - a) + bl * a);
            bytes[o + 3] = 255;
          }
        }
      }
    }
    ctx.putImageData(img, 0, 0);
    this.shadedTop = top;
    return { events: drawnEvents, controls: drawnControls };
  }

  drawScaleBar(ctx, w, h, scale) {
    const maxPx = Math.min(140, w / 4);
    const raw = maxPx / scale; // metres
    if (!(raw > 0) || !Number.isFinite(raw)) return;
    const p = Math.pow(10, Math.floor(Math.log10(raw)));
    let nice = p;
    for (const m of [1, 2, 5, 10]) if (m * p <= raw) nice = m * p;
    const len = nice * scale;
    const label = nice >= 1000 ? `${formatLength(nice / 1000)} km` : `${formatLength(nice)} m`;
    const x = 14;
    const y = h - 16;
    ctx.font = '12px system-ui, "DejaVu Sans", sans-serif';
    const tw = ctx.measureText(label).width;
    ctx.fillStyle = 'rgba(255,255,255,0.85)';
    ctx.fillRect(x - 6, y - 22, Math.max(len, tw) + 14, 30);
    ctx.fillStyle = '#1c2430';
    ctx.fillRect(x, y - 3, len, 4);
    ctx.fillRect(x, y - 8, 2, 10);
    ctx.fillRect(x + len - 2, y - 8, 2, 10);
    ctx.textBaseline = 'alphabetic';
    ctx.fillText(label, x, y - 10);
  }

  drawNorth(ctx, w) {
    const x = w - 26;
    const y = 16;
    ctx.fillStyle = 'rgba(255,255,255,0.85)';
    ctx.fillRect(x - 14, y - 8, 28, 44);
    ctx.fillStyle = '#1c2430';
    ctx.beginPath();
    ctx.moveTo(x, y);
    ctx.lineTo(x + 7, y + 16);
    ctx.lineTo(x, y + 12);
    ctx.lineTo(x - 7, y + 16);
    ctx.closePath();
    ctx.fill();
    ctx.font = 'bold 12px system-ui, "DejaVu Sans", sans-serif';
    ctx.textAlign = 'center';
    ctx.textBaseline = 'alphabetic';
    ctx.fillText('N', x, y + 31);
    ctx.textAlign = 'start';
  }
}

function formatLength(v) {
  return v >= 1 ? String(Math.round(v)) : String(Number(v.toPrecision(1)));
}

/** '#rrggbb' → 0xAABBGGRR (little-endian RGBA bytes in a Uint32Array). */
/** Above this many points (events and controls) the map shades squares by
 * how many events they hold instead of drawing each dot. */
export const DENSE_ABOVE = 20000;

/** Opacity of a dot square holding one event when dense layers are shaded. */
const DENSE_MIN_ALPHA = 0.3;

/** Fills a size×size square centred on (x, y) in a packed RGBA buffer. */
function fillSquare(px, W, H, x, y, s, c) {
  const x0 = Math.max(0, Math.round(x - s / 2));
  const y0 = Math.max(0, Math.round(y - s / 2));
  const x1 = Math.min(W, x0 + s);
  const y1 = Math.min(H, y0 + s);
  if (x1 <= x0 || y1 <= y0) return false;
  for (let yy = y0; yy < y1; yy++) {
    const row = yy * W;
    for (let xx = x0; xx < x1; xx++) px[row + xx] = c;
  }
  return true;
}

function packColour(hex) {
  const r = parseInt(hex.slice(1, 3), 16);
  const g = parseInt(hex.slice(3, 5), 16);
  const b = parseInt(hex.slice(5, 7), 16);
  return ((255 << 24) | (b << 16) | (g << 8) | r) >>> 0;
}
