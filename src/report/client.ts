/**
 * The report page's one inline script, as text. It reads the embedded data (already
 * decimated in TypeScript), draws every plot on its <canvas>, keeps a time cursor shared by
 * all plots with read-outs in the legends, and filters the event tables by kind. Plain ES2017
 * with no template literals; it never writes HTML from data (textContent only).
 *
 * Data it reads (see html.ts for the writer): times are whole microseconds after `t0`,
 * difference-coded; values are numbers or null (no sample in that column).
 */
export const CLIENT_SCRIPT = String.raw`(function () {
  'use strict';
  var D = JSON.parse(document.getElementById('antiphon-data').textContent);
  var T0 = D.t0, T1 = D.t1, SPAN = T1 - T0;
  // The view: the span of time every plot shows (zoom and pan move all plots together).
  var V0 = T0, V1 = T1, VSPAN = SPAN;
  var M = { l: 76, r: 16, t: 10, b: 40 };
  var INK = '#1d232a', MUTED = '#5d646e', GRID = '#ebe8e1', FRAME = '#a9a398', HOLD_FILL = 'rgba(222, 166, 36, 0.20)', HOLD_BAR = '#a8740c';
  var FONT = '11px system-ui, -apple-system, "Segoe UI", sans-serif';

  function times(a) {
    var o = new Float64Array(a.length), s = 0;
    for (var i = 0; i < a.length; i++) { s += a[i]; o[i] = T0 + s / 1e6; }
    return o;
  }
  function nums(a) {
    var o = new Float64Array(a.length);
    for (var i = 0; i < a.length; i++) o[i] = a[i] === null ? NaN : a[i];
    return o;
  }
  var holds = D.holds.map(function (h) { return h.cm ? { cm: h.cm } : { iv: times(h.iv) }; });
  D.plots.forEach(function (p) {
    if (p.kind === 'xy') p.series.forEach(function (s) {
      if (s.mn) { s.mnA = nums(s.mn); s.mxA = nums(s.mx); } else { s.ptA = times(s.pt); s.pyA = nums(s.py); }
    });
    if (p.kind === 'role' && !p.steps.cm) { p.st = times(p.steps.t); p.sy = nums(p.steps.y); p.se = T0 + p.steps.end / 1e6; }
    if (p.kind === 'events' && !p.binned) p.mt = p.marks.map(times);
  });

  function niceStep(span, n) {
    var raw = span / Math.max(1, n);
    if (!(raw > 0) || !isFinite(raw)) return 1;
    var p = Math.pow(10, Math.floor(Math.log10(raw)));
    var m = raw / p;
    return (m <= 1 ? 1 : m <= 2 ? 2 : m <= 5 ? 5 : 10) * p;
  }
  function decimals(step) { return Math.max(0, Math.min(9, -Math.floor(Math.log10(step) + 1e-9))); }
  function fmt(v) {
    if (!isFinite(v)) return '—';
    return String(Number(v.toPrecision(4)));
  }
  function xOf(P, t) { return P.x0 + (t - V0) / VSPAN * (P.x1 - P.x0); }
  // Data columns cover the whole record; their place and width in the view.
  function xCol(P, i, n) { return xOf(P, T0 + i / n * SPAN); }
  function colW(P, n) { return (P.x1 - P.x0) / n * SPAN / VSPAN; }

  function yScale(P, y) {
    var lo = y.lo, hi = y.hi;
    return { lo: lo, hi: hi, f: function (v) { return P.y1 - (v - lo) / (hi - lo) * (P.y1 - P.y0); } };
  }

  function grid(P, ys) {
    var g = P.g;
    g.strokeStyle = GRID; g.lineWidth = 1;
    var step = niceStep(VSPAN, (P.x1 - P.x0) / 90);
    P.tStep = step;
    g.beginPath();
    for (var t = Math.ceil(V0 / step) * step; t <= V1 + step * 1e-9; t += step) {
      var x = Math.round(xOf(P, t)) + 0.5;
      g.moveTo(x, P.y0); g.lineTo(x, P.y1);
    }
    if (ys) {
      var ystep = niceStep(ys.hi - ys.lo, (P.y1 - P.y0) / 34);
      P.yStep = ystep;
      for (var v = Math.ceil(ys.lo / ystep) * ystep; v <= ys.hi + ystep * 1e-9; v += ystep) {
        var y = Math.round(ys.f(v)) + 0.5;
        g.moveTo(P.x0, y); g.lineTo(P.x1, y);
      }
    }
    g.stroke();
    if (ys && ys.lo < 0 && ys.hi > 0) {
      g.strokeStyle = FRAME; g.beginPath();
      var y0 = Math.round(ys.f(0)) + 0.5; g.moveTo(P.x0, y0); g.lineTo(P.x1, y0); g.stroke();
    }
  }

  function axes(P, p, ys) {
    var g = P.g;
    g.strokeStyle = FRAME; g.lineWidth = 1;
    g.strokeRect(P.x0 + 0.5, P.y0 + 0.5, P.x1 - P.x0 - 1, P.y1 - P.y0 - 1);
    g.fillStyle = MUTED; g.font = FONT;
    // time ticks and labels
    var step = P.tStep, dec = decimals(step);
    g.textAlign = 'center'; g.textBaseline = 'top';
    g.beginPath(); g.strokeStyle = FRAME;
    for (var t = Math.ceil(V0 / step) * step; t <= V1 + step * 1e-9; t += step) {
      var x = Math.round(xOf(P, t)) + 0.5;
      g.moveTo(x, P.y1); g.lineTo(x, P.y1 + 4);
      g.fillText((Math.abs(t) < step * 1e-6 ? 0 : t).toFixed(dec), x, P.y1 + 6);
    }
    g.stroke();
    g.fillStyle = INK;
    g.fillText('time (s)', (P.x0 + P.x1) / 2, P.y1 + 22);
    if (ys) {
      var ystep = P.yStep, ydec = decimals(ystep);
      g.textAlign = 'right'; g.textBaseline = 'middle'; g.fillStyle = MUTED;
      g.beginPath();
      for (var v = Math.ceil(ys.lo / ystep) * ystep; v <= ys.hi + ystep * 1e-9; v += ystep) {
        var y = Math.round(ys.f(v)) + 0.5;
        g.moveTo(P.x0 - 4, y); g.lineTo(P.x0, y);
        g.fillText((Math.abs(v) < ystep * 1e-6 ? 0 : v).toFixed(ydec), P.x0 - 6, y);
      }
      g.stroke();
      g.save();
      g.translate(14, (P.y0 + P.y1) / 2); g.rotate(-Math.PI / 2);
      g.textAlign = 'center'; g.textBaseline = 'middle'; g.fillStyle = INK;
      g.fillText(p.y.label, 0, 0);
      g.restore();
    }
    if (p.lanes) {
      g.textAlign = 'right'; g.textBaseline = 'middle'; g.fillStyle = INK;
      var lh = (P.y1 - P.y0) / p.lanes.length;
      for (var i = 0; i < p.lanes.length; i++) g.fillText(clipText(g, p.lanes[i], M.l - 10), P.x0 - 6, P.y0 + (i + 0.5) * lh);
    }
  }
  function clipText(g, s, w) {
    if (g.measureText(s).width <= w) return s;
    while (s.length > 1 && g.measureText(s + '…').width > w) s = s.slice(0, -1);
    return s + '…';
  }

  function forHolds(P, h, fn) {
    if (h.cm) {
      var n = h.cm.length, cw = colW(P, n);
      for (var i = 0; i < n; i++) if (h.cm[i]) fn(xCol(P, i, n), Math.max(cw, 1));
      return;
    }
    for (var k = 0; k + 1 < h.iv.length; k += 2) {
      var a = xOf(P, h.iv[k]), b = xOf(P, h.iv[k + 1]);
      var w = Math.max(b - a, 1.5);
      fn(Math.min(a, P.x1 - w), w);
    }
  }
  function shadeHolds(P, h) {
    P.g.fillStyle = HOLD_FILL;
    forHolds(P, h, function (x, w) { P.g.fillRect(x, P.y0, w, P.y1 - P.y0); });
  }
  function holdBars(P, h) {
    P.g.fillStyle = HOLD_BAR;
    forHolds(P, h, function (x, w) { P.g.fillRect(x, P.y0, w, 4); });
  }

  function stroke(P, s) {
    var g = P.g;
    g.strokeStyle = s.c; g.lineWidth = s.w; g.lineJoin = 'round'; g.lineCap = 'round';
    g.globalAlpha = s.a || 1;
  }
  function drawEnv(P, s, ys) {
    var g = P.g, mn = s.mnA, mx = s.mxA, n = mn.length;
    var gapCols = s.gap > 0 ? s.gap / (SPAN / n) : Infinity;
    var pen = false, last = -1, verts = 0;
    stroke(P, s);
    g.beginPath();
    for (var i = 0; i < n; i++) {
      var a = mn[i], b = mx[i];
      if (a !== a) continue;
      var x = xCol(P, i + 0.5, n), ya = ys.f(a), yb = ys.f(b);
      if (pen && i - last - 1 > gapCols) pen = false;
      var first = (i & 1) ? yb : ya, second = (i & 1) ? ya : yb;
      if (!pen) { g.moveTo(x, first); pen = true; } else g.lineTo(x, first);
      g.lineTo(x, second);
      last = i; verts += 2;
    }
    g.stroke(); g.globalAlpha = 1;
    return verts;
  }
  function drawPts(P, s, ys) {
    var g = P.g, t = s.ptA, y = s.pyA, pen = false, verts = 0, prevT = NaN;
    stroke(P, s);
    g.beginPath();
    for (var i = 0; i < t.length; i++) {
      if (y[i] !== y[i]) { pen = false; continue; }
      var x = xOf(P, t[i]), yy = ys.f(y[i]);
      if (pen && s.gap > 0 && t[i] - prevT > s.gap) pen = false;
      if (!pen) { g.moveTo(x, yy); g.lineTo(x, yy); pen = true; } else g.lineTo(x, yy);
      prevT = t[i]; verts++;
    }
    g.stroke(); g.globalAlpha = 1;
    return verts;
  }
  function drawRole(P, p) {
    var g = P.g, lh = (P.y1 - P.y0) / 2, verts = 0;
    var colours = p.colours;
    function lane(v, x, w) {
      if (v !== 0 && v !== 1) return;
      g.fillStyle = colours[v];
      g.fillRect(x, P.y0 + v * lh + 3, w, lh - 6);
      verts++;
    }
    if (p.steps.cm) {
      var cm = p.steps.cm, n = cm.length, cw = colW(P, n);
      for (var i = 0; i < n; i++) {
        if (cm[i] & 1) lane(0, xCol(P, i, n), Math.max(cw, 1));
        if (cm[i] & 2) lane(1, xCol(P, i, n), Math.max(cw, 1));
      }
    } else {
      for (var k = 0; k < p.st.length; k++) {
        var a = xOf(P, p.st[k]), b = xOf(P, k + 1 < p.st.length ? p.st[k + 1] : p.se);
        lane(p.sy[k], a, Math.max(b - a, 1));
      }
    }
    g.strokeStyle = GRID; g.beginPath();
    g.moveTo(P.x0, Math.round(P.y0 + lh) + 0.5); g.lineTo(P.x1, Math.round(P.y0 + lh) + 0.5); g.stroke();
    return verts;
  }
  function drawEvents(P, p) {
    var g = P.g, n = p.lanes.length, lh = (P.y1 - P.y0) / n, verts = 0;
    for (var i = 0; i < n; i++) {
      g.fillStyle = p.colours[i];
      var top = P.y0 + i * lh + 3, hh = lh - 6;
      if (p.binned) {
        var cw = colW(P, D.cols), cols = p.marks[i];
        for (var j = 0; j < cols.length; j++) { g.fillRect(Math.min(xCol(P, cols[j], D.cols), P.x1 - 1.5), top, Math.max(cw, 1.5), hh); verts++; }
      } else {
        var ts = p.mt[i];
        for (var k = 0; k < ts.length; k++) { g.fillRect(Math.min(Math.max(xOf(P, ts[k]) - 0.75, P.x0), P.x1 - 1.5), top, 1.5, hh); verts++; }
      }
      if (i > 0) {
        g.fillStyle = GRID; g.fillRect(P.x0, Math.round(P.y0 + i * lh), P.x1 - P.x0, 1);
      }
    }
    return verts;
  }

  function draw(c, p) {
    var h = +c.getAttribute('data-h');
    c.style.height = h + 'px';
    var w = c.clientWidth || 800, dpr = window.devicePixelRatio || 1;
    c.width = Math.max(1, Math.round(w * dpr)); c.height = Math.max(1, Math.round(h * dpr));
    var g = c.getContext('2d');
    g.setTransform(dpr, 0, 0, dpr, 0, 0);
    var P = { g: g, w: w, h: h, x0: M.l, x1: Math.max(M.l + 10, w - M.r), y0: M.t, y1: h - M.b };
    g.clearRect(0, 0, w, h);
    g.fillStyle = '#ffffff'; g.fillRect(P.x0, P.y0, P.x1 - P.x0, P.y1 - P.y0);
    var ys = p.kind === 'xy' ? yScale(P, p.y) : null;
    grid(P, ys);
    g.save();
    g.beginPath(); g.rect(P.x0, P.y0, P.x1 - P.x0, P.y1 - P.y0); g.clip();
    p.holds.forEach(function (a) { shadeHolds(P, holds[a]); });
    var verts = 0;
    if (p.kind === 'xy') p.series.forEach(function (s) { verts += s.mnA ? drawEnv(P, s, ys) : drawPts(P, s, ys); });
    else if (p.kind === 'role') verts += drawRole(P, p);
    else if (p.kind === 'events') verts += drawEvents(P, p);
    p.holds.forEach(function (a) { holdBars(P, holds[a]); });
    g.restore();
    axes(P, p, ys);
    c.setAttribute('data-vertices', String(verts));
  }

  var canvases = Array.prototype.slice.call(document.querySelectorAll('canvas[data-plot]'));
  function drawAll() {
    canvases.forEach(function (c) { draw(c, D.plots[+c.getAttribute('data-plot')]); });
    document.body.setAttribute('data-drawn', String(canvases.length));
  }

  // Time cursor shared by every plot, with read-outs.
  function lastAtOrBefore(a, t) {
    var lo = 0, hi = a.length - 1, r = -1;
    while (lo <= hi) { var m = (lo + hi) >> 1; if (a[m] <= t) { r = m; lo = m + 1; } else hi = m - 1; }
    return r;
  }
  function valueText(s, t) {
    if (s.mnA) {
      var n = s.mnA.length, c = Math.min(n - 1, Math.max(0, Math.floor((t - T0) / SPAN * n)));
      var a = s.mnA[c], b = s.mxA[c];
      if (a !== a) return '—';
      return a === b ? fmt(a) : fmt(a) + '…' + fmt(b);
    }
    var i = lastAtOrBefore(s.ptA, t);
    return i < 0 ? '—' : fmt(s.pyA[i]);
  }
  function heldAt(h, t) {
    if (h.cm) { var n = h.cm.length; return !!h.cm[Math.min(n - 1, Math.max(0, Math.floor((t - T0) / SPAN * n)))]; }
    for (var k = 0; k + 1 < h.iv.length; k += 2) if (h.iv[k] <= t && t <= h.iv[k + 1]) return true;
    return false;
  }
  function roleAt(p, t) {
    var names = ['speaker', 'listener'];
    if (p.steps.cm) {
      var n = p.steps.cm.length, m = p.steps.cm[Math.min(n - 1, Math.max(0, Math.floor((t - T0) / SPAN * n)))];
      return m === 3 ? 'both in this column' : m === 1 ? names[0] : m === 2 ? names[1] : '—';
    }
    var i = lastAtOrBefore(p.st, t);
    return i < 0 ? '—' : (names[p.sy[i]] || '—');
  }
  var figures = Array.prototype.slice.call(document.querySelectorAll('figure[data-plot]'));
  function cursor(t) {
    figures.forEach(function (f) {
      var p = D.plots[+f.getAttribute('data-plot')];
      var c = f.querySelector('canvas'), cur = f.querySelector('.cursor'), rd = f.querySelector('.tread');
      if (t === null) {
        cur.hidden = true; rd.textContent = '';
        Array.prototype.forEach.call(f.querySelectorAll('.rv'), function (el) { el.textContent = ''; });
        return;
      }
      var w = c.clientWidth, x0 = M.l, x1 = Math.max(M.l + 10, w - M.r);
      cur.style.left = (x0 + (t - V0) / VSPAN * (x1 - x0)) + 'px';
      cur.hidden = t < V0 || t > V1;
      var text = 't = ' + t.toFixed(3) + ' s';
      if (p.kind === 'role') text += ' · ' + roleAt(p, t);
      if (p.holds.some(function (a) { return heldAt(holds[a], t); })) text += ' · watchdog hold';
      rd.textContent = text;
      if (p.kind === 'xy') {
        Array.prototype.forEach.call(f.querySelectorAll('.rv[data-s]'), function (el) {
          el.textContent = valueText(p.series[+el.getAttribute('data-s')], t);
        });
      }
    });
  }
  canvases.forEach(function (c) {
    c.addEventListener('mousemove', function (ev) {
      var r = c.getBoundingClientRect(), x = ev.clientX - r.left, x0 = M.l, x1 = Math.max(M.l + 10, r.width - M.r);
      if (drag) return;
      cursor(x < x0 || x > x1 ? null : V0 + (x - x0) / (x1 - x0) * VSPAN);
    });
    c.addEventListener('mouseleave', function () { cursor(null); });
    // Zoom (wheel, about the pointer), pan (drag), back to the whole record (double click): every plot follows.
    c.addEventListener('wheel', function (ev) {
      ev.preventDefault();
      var r = c.getBoundingClientRect(), x0 = M.l, x1 = Math.max(M.l + 10, r.width - M.r);
      var f = Math.min(1, Math.max(0, (ev.clientX - r.left - x0) / (x1 - x0)));
      var at = V0 + f * VSPAN, k = ev.deltaY > 0 ? 1.25 : 0.8;
      setView(at - f * VSPAN * k, at + (1 - f) * VSPAN * k);
    }, { passive: false });
    c.addEventListener('mousedown', function (ev) {
      var r = c.getBoundingClientRect();
      drag = { x: ev.clientX, v0: V0, v1: V1, w: Math.max(10, r.width - M.l - M.r) };
      ev.preventDefault();
    });
    c.addEventListener('dblclick', function () { setView(T0, T1); });
  });
  var drag = null;
  window.addEventListener('mousemove', function (ev) {
    if (!drag) return;
    var dt = -(ev.clientX - drag.x) / drag.w * (drag.v1 - drag.v0);
    setView(drag.v0 + dt, drag.v1 + dt);
  });
  window.addEventListener('mouseup', function () { drag = null; });
  /** Show [a, b] (clamped to the record; at least a millionth of it), redraw every plot. */
  function setView(a, b) {
    var span = Math.min(SPAN, Math.max(SPAN * 1e-6, b - a));
    if (!(span > 0)) return;
    a = Math.max(T0, Math.min(a, T1 - span));
    V0 = a; V1 = a + span; VSPAN = span;
    document.body.setAttribute('data-view', V0.toFixed(6) + ',' + V1.toFixed(6));
    drawAll();
    if (window.antiphonPlanView) window.antiphonPlanView(V0, V1);
  }
  window.antiphonSetView = setView;
  window.antiphonCursor = cursor;

  // Event table filters.
  Array.prototype.forEach.call(document.querySelectorAll('select[data-filter]'), function (sel) {
    sel.addEventListener('change', function () {
      var body = document.getElementById(sel.getAttribute('data-filter'));
      var v = sel.value;
      Array.prototype.forEach.call(body.rows, function (tr) { tr.hidden = v !== 'all' && tr.getAttribute('data-k') !== v; });
    });
  });

  var pending = false;
  window.addEventListener('resize', function () {
    if (pending) return;
    pending = true;
    requestAnimationFrame(function () { pending = false; drawAll(); });
  });
  drawAll();
})();
`;
