/**
 * The plan view of the episode report: the cell from above. Zones (drawn as they stand at the
 * slider's time: solid when occupied, outlined when free; a change during the episode flips
 * them), the paths of both grasp points and of the object's centre, the collisions marked, and
 * a time slider placing the object and listing what each arm then believed about each zone it
 * infers. The time plots' view (zoom and pan) and the slider are linked: moving the slider
 * moves the plots' cursor; zooming the plots limits the slider to the view.
 *
 * On a task with waypoints a side view follows: x against height, with the nominal path
 * (dashed), the heights of both grasp points and of the object's centre, and the zones at their
 * heights (a box or cylinder as its x extent between bottom and top, a sphere as a circle); the
 * slider places the object there too. Boxes turned by their yaw are drawn turned in the plan.
 *
 * Data: decimated by stride to at most PLAN_POINTS samples (paths) and BELIEF_POINTS belief rows
 * per arm; every collision and every zone change is kept. Drawn by PLAN_SCRIPT into an inline
 * SVG; strings reach the page only as text (textContent), never as markup.
 */
import { escapeHtml } from './encode.js';
import type { ReportInput, ReportPlan } from './types.js';

export const PLAN_POINTS = 1500;
export const BELIEF_POINTS = 1500;

const r5 = (v: number) => (Number.isFinite(v) ? Math.round(v * 1e5) / 1e5 : null);

/** The JSON payload of the plan view. */
export function planPayload(input: ReportInput, plan: ReportPlan): unknown {
  const n = plan.t.length;
  const stride = Math.max(1, Math.ceil(n / PLAN_POINTS));
  const idx: number[] = [];
  for (let i = 0; i < n; i += stride) idx.push(i);
  if (n > 0 && idx[idx.length - 1] !== n - 1) idx.push(n - 1);
  const pick = (a: Float64Array) => idx.map((i) => r5(a[i]!));
  const arms = input.arms.map((a) => {
    const m = a.beliefT.length;
    const k = a.hiddenZones.length;
    const s = Math.max(1, Math.ceil(m / BELIEF_POINTS));
    const rows: number[] = [];
    for (let i = 0; i < m; i += s) rows.push(i);
    return {
      name: a.name,
      zones: a.hiddenZones,
      t: rows.map((i) => r5(a.beliefT[i]!)),
      p: rows.map((i) => Array.from({ length: k }, (_, j) => r5(a.beliefMarginals[i * k + j]!))),
    };
  });
  return {
    zones: plan.zones,
    length_m: plan.object_length_m,
    t: pick(plan.t),
    obj: [pick(plan.objectX), pick(plan.objectY), pick(plan.objectYaw)],
    left: [pick(plan.leftX), pick(plan.leftY)],
    right: [pick(plan.rightX), pick(plan.rightY)],
    collisions: plan.collisions,
    start: plan.start_m,
    goal: plan.goal_m,
    arms,
    ...(plan.side
      ? { side: { obj: pick(plan.side.objectZ), left: pick(plan.side.leftZ), right: pick(plan.side.rightZ), path: [plan.side.pathX.map(r5), plan.side.pathZ.map(r5)], radius_m: plan.side.radius_m } }
      : {}),
  };
}

export function renderPlanSection(side = false): string {
  return `<section id="plan"><h2>Plan view</h2>
<p class="note">The cell from above (x right, y up, metres). Zones stand as they were at the slider's time: filled when occupied, outlined when free (a zone that changes during the episode flips). Lines: the paths of the left grasp, the right grasp and the object's centre; crosses: collisions. The bar is the object at the slider's time. Zoom and pan the time plots (wheel, drag; double click for the whole record): the slider follows their view.</p>
<div class="plan-wrap"><svg id="plan-svg" width="640" height="480" role="img" aria-label="plan view of the cell"></svg>
<div class="plan-side"><label for="plan-t">time <output id="plan-tv">0.000 s</output></label><br><input type="range" id="plan-t" min="0" max="1000" value="0" step="1"><table class="kv" id="plan-belief"><tbody></tbody></table></div></div>${
    side
      ? `
<h3>Side view</h3>
<p class="note">x against height (metres, the vertical stretched to fit). Dashed: the nominal path of the object's centre; lines: the heights of the left grasp, the right grasp and the object's centre; zones at their heights (a box or cylinder over its x extent, a sphere as a circle). The bar is the object at the slider's time.</p>
<svg id="side-svg" width="640" height="260" role="img" aria-label="side view of the path"></svg>`
      : ''
  }
</section>`;
}

export const PLAN_CSS = `.plan-wrap{display:flex;flex-wrap:wrap;gap:16px;align-items:flex-start}#plan-svg{background:#fff;border:1px solid #a9a398}.plan-side{min-width:260px}#plan-t{width:320px}`;

/** Escaped legend text for tests and the page. */
export const PLAN_LEGEND = ['left grasp', 'right grasp', 'object centre'].map(escapeHtml);

export const PLAN_SCRIPT = String.raw`(function () {
  'use strict';
  var el = document.getElementById('antiphon-plan');
  if (!el) return;
  var P = JSON.parse(el.textContent);
  var svg = document.getElementById('plan-svg'), slider = document.getElementById('plan-t'), out = document.getElementById('plan-tv');
  var tbody = document.querySelector('#plan-belief tbody');
  var NS = 'http://www.w3.org/2000/svg';
  var W = 640, H = 480, pad = 30;
  function mk(tag, attrs, parent) {
    var e = document.createElementNS(NS, tag);
    for (var k in attrs) e.setAttribute(k, String(attrs[k]));
    (parent || svg).appendChild(e);
    return e;
  }
  // Extent: paths, zones, start and goal, the object's length around its path.
  var xs = [], ys = [];
  function add(x, y) { if (x !== null && y !== null) { xs.push(x); ys.push(y); } }
  for (var i = 0; i < P.t.length; i++) { add(P.left[0][i], P.left[1][i]); add(P.right[0][i], P.right[1][i]); add(P.obj[0][i], P.obj[1][i] + P.length_m / 2); add(P.obj[0][i], P.obj[1][i] - P.length_m / 2); }
  P.zones.forEach(function (z) {
    var hx = z.shape === 'box' ? z.size_m[0] / 2 : z.radius_m, hy = z.shape === 'box' ? z.size_m[1] / 2 : z.radius_m;
    add(z.center_m[0] - hx, z.center_m[1] - hy); add(z.center_m[0] + hx, z.center_m[1] + hy);
  });
  add(P.start[0], P.start[1]); add(P.goal[0], P.goal[1]);
  var x0 = Math.min.apply(null, xs) - 0.1, x1 = Math.max.apply(null, xs) + 0.1, y0 = Math.min.apply(null, ys) - 0.1, y1 = Math.max.apply(null, ys) + 0.1;
  var s = Math.min((W - 2 * pad) / (x1 - x0), (H - 2 * pad) / (y1 - y0));
  function X(x) { return pad + (x - x0) * s; }
  function Y(y) { return H - pad - (y - y0) * s; }
  // Grid every 0.2 m.
  var gg = mk('g', { stroke: '#ebe8e1' });
  for (var gx = Math.ceil(x0 / 0.2) * 0.2; gx <= x1; gx += 0.2) mk('line', { x1: X(gx), x2: X(gx), y1: Y(y0), y2: Y(y1) }, gg);
  for (var gy = Math.ceil(y0 / 0.2) * 0.2; gy <= y1; gy += 0.2) mk('line', { x1: X(x0), x2: X(x1), y1: Y(gy), y2: Y(gy) }, gg);
  var COL = { left: '#3b4c8c', right: '#6f9a36', both: '#8c3b8f' };
  var zoneEls = P.zones.map(function (z) {
    var c = COL[z.observed_by] || '#c5452a', e;
    if (z.shape === 'box') {
      e = mk('rect', { x: X(z.center_m[0] - z.size_m[0] / 2), y: Y(z.center_m[1] + z.size_m[1] / 2), width: z.size_m[0] * s, height: z.size_m[1] * s, stroke: c, 'stroke-width': 2 });
      // Turned about the vertical (counter-clockwise in the cell; the page's y points down).
      if (z.yaw_rad) e.setAttribute('transform', 'rotate(' + (-z.yaw_rad * 180 / Math.PI).toFixed(3) + ' ' + X(z.center_m[0]).toFixed(2) + ' ' + Y(z.center_m[1]).toFixed(2) + ')');
    }
    else e = mk('circle', { cx: X(z.center_m[0]), cy: Y(z.center_m[1]), r: z.radius_m * s, stroke: c, 'stroke-width': 2 });
    e.setAttribute('data-zone', z.name);
    var label = mk('text', { x: X(z.center_m[0]), y: Y(z.center_m[1]) - 4, 'text-anchor': 'middle', 'font-size': 11, fill: '#1d232a' });
    label.textContent = z.name + ' (' + z.observed_by + ')';
    return { z: z, e: e, c: c };
  });
  function occupiedAt(z, t) {
    var o = z.occupied;
    for (var k = 0; k < z.changes.length; k++) if (z.changes[k].t_s <= t) o = z.changes[k].occupied;
    return o;
  }
  function path(a, colour, dash) {
    var d = '', pen = false;
    for (var i = 0; i < P.t.length; i++) {
      var x = a[0][i], y = a[1][i];
      if (x === null || y === null) { pen = false; continue; }
      d += (pen ? 'L' : 'M') + X(x).toFixed(1) + ' ' + Y(y).toFixed(1);
      pen = true;
    }
    return mk('path', { d: d, fill: 'none', stroke: colour, 'stroke-width': 1.5, 'stroke-dasharray': dash || 'none', 'data-path': colour });
  }
  path(P.left, COL.left);
  path(P.right, COL.right);
  path([P.obj[0], P.obj[1]], '#6b5e55', '4 3');
  P.collisions.forEach(function (c) {
    var g = mk('g', { stroke: '#c5452a', 'stroke-width': 2.5, 'data-collision': c.zone });
    mk('line', { x1: X(c.x) - 6, x2: X(c.x) + 6, y1: Y(c.y) - 6, y2: Y(c.y) + 6 }, g);
    mk('line', { x1: X(c.x) - 6, x2: X(c.x) + 6, y1: Y(c.y) + 6, y2: Y(c.y) - 6 }, g);
  });
  mk('circle', { cx: X(P.start[0]), cy: Y(P.start[1]), r: 4, fill: '#1d232a' });
  mk('circle', { cx: X(P.goal[0]), cy: Y(P.goal[1]), r: 4, fill: 'none', stroke: '#1d232a', 'stroke-width': 2 });
  var bar = mk('line', { stroke: '#1d232a', 'stroke-width': 5, 'stroke-linecap': 'round', id: 'plan-object' });
  var legend = [['left grasp', COL.left], ['right grasp', COL.right], ['object centre', '#6b5e55'], ['collision', '#c5452a']];
  legend.forEach(function (l, k) {
    mk('rect', { x: pad + k * 140, y: 6, width: 12, height: 4, fill: l[1] });
    var t = mk('text', { x: pad + k * 140 + 16, y: 12, 'font-size': 11, fill: '#1d232a' });
    t.textContent = l[0];
  });
  var TA = P.t.length ? P.t[0] : 0, TB = P.t.length ? P.t[P.t.length - 1] : 0, VA = TA, VB = TB;
  function lastAtOrBefore(a, t) {
    var lo = 0, hi = a.length - 1, r = -1;
    while (lo <= hi) { var m = (lo + hi) >> 1; if (a[m] <= t) { r = m; lo = m + 1; } else hi = m - 1; }
    return r;
  }
  function show(t) {
    out.textContent = t.toFixed(3) + ' s';
    zoneEls.forEach(function (z) {
      var o = occupiedAt(z.z, t);
      z.e.setAttribute('fill', o ? z.c : 'none');
      z.e.setAttribute('fill-opacity', o ? '0.45' : '0');
      z.e.setAttribute('data-occupied', o ? '1' : '0');
    });
    var i = Math.max(0, lastAtOrBefore(P.t, t));
    var ox = P.obj[0][i], oy = P.obj[1][i], yaw = P.obj[2][i] || 0, h = P.length_m / 2;
    if (ox !== null && oy !== null) {
      // The object lies along its own y axis.
      var dx = -Math.sin(yaw) * h, dy = Math.cos(yaw) * h;
      bar.setAttribute('x1', X(ox - dx)); bar.setAttribute('y1', Y(oy - dy)); bar.setAttribute('x2', X(ox + dx)); bar.setAttribute('y2', Y(oy + dy));
    }
    showSide(i, t);
    while (tbody.firstChild) tbody.removeChild(tbody.firstChild);
    P.arms.forEach(function (a) {
      var j = lastAtOrBefore(a.t, t);
      a.zones.forEach(function (name, k) {
        var tr = document.createElement('tr'), th = document.createElement('th'), td = document.createElement('td');
        th.textContent = a.name + ' believes ' + name + ' occupied';
        var zz = P.zones.filter(function (z) { return z.name === name; })[0];
        var truth = zz ? (occupiedAt(zz, t) ? 'occupied' : 'free') : '?';
        td.textContent = (j < 0 || a.p[j][k] === null ? '—' : (100 * a.p[j][k]).toFixed(1) + ' %') + ' (truth: ' + truth + ')';
        tr.appendChild(th); tr.appendChild(td); tbody.appendChild(tr);
      });
    });
    document.body.setAttribute('data-plan-t', t.toFixed(3));
  }
  // The side view (a task with waypoints): x against height.
  var side = null;
  if (P.side) side = drawSide(P.side);
  function drawSide(S) {
    var sv = document.getElementById('side-svg'), SW = 640, SH = 260, sp = 30;
    function m2(tag, attrs, parent) { return mk(tag, attrs, parent || sv); }
    var zs = [], hs = [];
    for (var i = 0; i < P.t.length; i++) { [S.obj[i], S.left[i], S.right[i]].forEach(function (v) { if (v !== null) hs.push(v); }); }
    S.path[1].forEach(function (v) { if (v !== null) hs.push(v); });
    var z0 = Math.min.apply(null, hs) - 0.15, z1 = Math.max.apply(null, hs) + 0.15;
    var sx = (SW - 2 * sp) / (x1 - x0), sz = (SH - 2 * sp) / (z1 - z0);
    function SX(x) { return sp + (x - x0) * sx; }
    function SZ(z) { return SH - sp - (Math.min(z1, Math.max(z0, z)) - z0) * sz; }
    var g2 = m2('g', { stroke: '#ebe8e1' });
    for (var hz = Math.ceil(z0 / 0.1) * 0.1; hz <= z1; hz += 0.1) {
      m2('line', { x1: SX(x0), x2: SX(x1), y1: SZ(hz), y2: SZ(hz) }, g2);
      var lt = m2('text', { x: 2, y: SZ(hz) + 3, 'font-size': 9, fill: '#6b5e55', stroke: 'none' });
      lt.textContent = hz.toFixed(1);
    }
    var els = P.zones.map(function (z) {
      var c = COL[z.observed_by] || '#c5452a', e;
      if (z.center_z_m !== null && z.center_z_m !== undefined && z.shape === 'sphere') e = m2('ellipse', { cx: SX(z.center_m[0]), cy: SZ(z.center_z_m), rx: z.radius_m * sx, ry: z.radius_m * sz, stroke: c, 'stroke-width': 2 });
      else {
        var hx = z.shape === 'box' ? (Math.abs(Math.cos(z.yaw_rad || 0)) * z.size_m[0] + Math.abs(Math.sin(z.yaw_rad || 0)) * z.size_m[1]) / 2 : z.radius_m;
        var hb = z.height_m || [z0, z1];
        e = m2('rect', { x: SX(z.center_m[0] - hx), y: SZ(hb[1]), width: 2 * hx * sx, height: Math.max(1, SZ(hb[0]) - SZ(hb[1])), stroke: c, 'stroke-width': 2 });
      }
      e.setAttribute('data-side-zone', z.name);
      var lb = m2('text', { x: SX(z.center_m[0]), y: SZ(z1) + 12, 'text-anchor': 'middle', 'font-size': 10, fill: '#1d232a' });
      lb.textContent = z.name;
      return { z: z, e: e, c: c };
    });
    function line(xa, za, colour, dash, tag) {
      var d = '', pen = false;
      for (var i = 0; i < za.length; i++) {
        var x = xa[i], z = za[i];
        if (x === null || z === null) { pen = false; continue; }
        d += (pen ? 'L' : 'M') + SX(x).toFixed(1) + ' ' + SZ(z).toFixed(1);
        pen = true;
      }
      return m2('path', { d: d, fill: 'none', stroke: colour, 'stroke-width': 1.5, 'stroke-dasharray': dash || 'none', 'data-side-path': tag });
    }
    line(S.path[0], S.path[1], '#b08d1a', '6 4', 'nominal');
    line(P.left[0], S.left, COL.left, null, 'left');
    line(P.right[0], S.right, COL.right, null, 'right');
    line(P.obj[0], S.obj, '#6b5e55', '4 3', 'object');
    var sb = m2('line', { stroke: '#1d232a', 'stroke-width': 5, 'stroke-linecap': 'round', id: 'side-object' });
    return { els: els, bar: sb, SX: SX, SZ: SZ, S: S };
  }
  function showSide(i, t) {
    if (!side) return;
    side.els.forEach(function (z) {
      var o = occupiedAt(z.z, t);
      z.e.setAttribute('fill', o ? z.c : 'none');
      z.e.setAttribute('fill-opacity', o ? '0.45' : '0');
    });
    // The grasp points' x and heights span the object as seen from the side.
    var lx = P.left[0][i], rx = P.right[0][i], lz = side.S.left[i], rz = side.S.right[i];
    if (lx !== null && rx !== null && lz !== null && rz !== null) {
      side.bar.setAttribute('x1', side.SX(lx)); side.bar.setAttribute('y1', side.SZ(lz)); side.bar.setAttribute('x2', side.SX(rx)); side.bar.setAttribute('y2', side.SZ(rz));
    }
  }
  function fromSlider() { return VA + (VB - VA) * (+slider.value) / 1000; }
  slider.addEventListener('input', function () {
    var t = fromSlider();
    show(t);
    if (window.antiphonCursor) window.antiphonCursor(t);
  });
  window.antiphonPlanView = function (a, b) {
    var t = fromSlider();
    VA = Math.max(TA, a); VB = Math.min(TB, b);
    if (!(VB > VA)) { VA = TA; VB = TB; }
    var f = (Math.min(VB, Math.max(VA, t)) - VA) / (VB - VA || 1);
    slider.value = String(Math.round(1000 * f));
    show(fromSlider());
  };
  show(TA);
  document.body.setAttribute('data-plan', 'drawn');
})();
`;
