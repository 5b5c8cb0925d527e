/**
 * The plan view of the episode report: the cell from above. Zones (drawn as they stand at the
 * slider's time: solid when occupied, outlined when free; a change during the episode flips
 * them), the paths of both grasp points and of the object's centre, the collisions marked, and
 * a time slider placing the object and listing what each arm then believed about each zone it
 * infers. The time plots' view (zoom and pan) and the slider are linked: moving the slider
 * moves the plots' cursor; zooming the plots limits the slider to the view.
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
  };
}

export function renderPlanSection(): string {
  return `<section id="plan"><h2>Plan view</h2>
<p class="note">The cell from above (x right, y up, metres). Zones stand as they were at the slider's time: filled when occupied, outlined when free (a zone that changes during the episode flips). Lines: the paths of the left grasp, the right grasp and the object's centre; crosses: collisions. The bar is the object at the slider's time. Zoom and pan the time plots (wheel, drag; double click for the whole record): the slider follows their view.</p>
<div class="plan-wrap"><svg id="plan-svg" width="640" height="480" role="img" aria-label="plan view of the cell"></svg>
<div class="plan-side"><label for="plan-t">time <output id="plan-tv">0.000 s</output></label><br><input type="range" id="plan-t" min="0" max="1000" value="0" step="1"><table class="kv" id="plan-belief"><tbody></tbody></table></div></div>
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
    if (z.shape === 'box') e = mk('rect', { x: X(z.center_m[0] - z.size_m[0] / 2), y: Y(z.center_m[1] + z.size_m[1] / 2), width: z.size_m[0] * s, height: z.size_m[1] * s, stroke: c, 'stroke-width': 2 });
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
