/**
 * The HTML report: one self-contained file (inline CSS, one inline script drawing on canvas,
 * no network) from a ReportInput. Full-rate series are decimated here, before embedding:
 * continuous series to min/max envelopes over about 2000 time columns (a one-sample impact
 * stays visible), step series (role, watchdog hold) to exact change points (no change is
 * lost). Every event is listed; event markers are binned per column when there are many.
 * Every input string is escaped; a Content-Security-Policy admits only our own script.
 */
import { createHash } from 'node:crypto';
import { CLIENT_SCRIPT } from './client.js';
import { PLAN_CSS, PLAN_SCRIPT, planPayload, renderPlanSection } from './plan.js';
import {
  changePoints,
  columnOf,
  envelope,
  envelopeStrided,
  finiteRange,
  onIntervals,
  typicalSpacing,
  type Envelope,
  type Steps,
} from './decimate.js';
import { escapeHtml, microDeltas, scriptJson, seconds3 } from './encode.js';
import type { ReportArm, ReportCalibration, ReportEvent, ReportInput, ReportSeries } from './types.js';

export { changePoints, columnOf, envelope, envelopeStrided, onIntervals, type Envelope, type Steps } from './decimate.js';
export { escapeHtml } from './encode.js';

export interface RenderOptions {
  /** Time columns per plot (min/max per column). Default 2000. */
  readonly columns?: number;
  /** Above this many events in an arm, plot markers are binned per column and kind. Default 5000. */
  readonly markerLimit?: number;
  /** Above this many change points, a step series is drawn per column (every value taken in a column). Default 100 000. */
  readonly stepLimit?: number;
}

const DEFAULT_COLUMNS = 2000;
const DEFAULT_MARKER_LIMIT = 5000;
const DEFAULT_STEP_LIMIT = 100_000;

/** Our palette (plot colours are ours alone; pass/fail also carries a word and a sign). */
const C = {
  raw: '#8d929a',
  correction: '#17678a',
  impact: '#c5452a',
  recommended: '#17678a',
  measured: '#6b5e55',
  internal: '#6a3f8f',
  speaker: '#3b4c8c',
  listener: '#6f9a36',
  zones: ['#8c3b8f', '#17678a', '#c5452a', '#4f7f2d', '#a8740c', '#5a5f97', '#2d8c80', '#98582d'],
} as const;

const KIND_COLOURS = new Map<string, string>([
  ['trip', '#c5452a'],
  ['hold', '#a8740c'],
  ['release', '#4f7f2d'],
  ['impact', '#8c3b8f'],
  ['role', '#3b4c8c'],
  ['collision', '#1d232a'],
  ['tare', '#7d828a'],
  ['note', '#2d8c80'],
]);
const KIND_ORDER = ['trip', 'hold', 'release', 'impact', 'collision', 'role', 'tare', 'note'];
const OTHER_KIND_COLOURS = ['#5a5f97', '#98582d', '#4b6b78', '#7a4a6a'];
const OTHER_LANE_COLOUR = '#6d6a64';
const MAX_LANES = 12;
/** Short lane names that fit the plot's left margin (the event table keeps the kinds). */
const LANE_LABELS = new Map<string, string>([
  ['impact_start', 'impact'],
  ['impact_end', 'impact end'],
  ['tare_refused', 'tare refused'],
  ['input_missing', 'no input'],
]);
function laneLabel(kind: string): string {
  return LANE_LABELS.get(kind) ?? kind;
}

// ---------------------------------------------------------------------------------------
// Payload written into the page (read by client.ts)

type Num = number | null;
interface SeriesOut {
  readonly c: string;
  readonly w: number;
  readonly a?: number;
  readonly mn?: Num[];
  readonly mx?: Num[];
  readonly pt?: number[];
  readonly py?: Num[];
  /** Longest spacing drawn as connected, s (0: always connected). */
  readonly gap: number;
}
interface XyPlotOut {
  readonly kind: 'xy';
  readonly holds: number[];
  readonly y: { readonly label: string; readonly lo: number; readonly hi: number };
  readonly series: SeriesOut[];
}
interface RolePlotOut {
  readonly kind: 'role';
  readonly holds: number[];
  readonly lanes: string[];
  readonly colours: string[];
  readonly steps: { t: number[]; y: Num[]; end: number } | { cm: number[] };
}
interface EventPlotOut {
  readonly kind: 'events';
  readonly holds: number[];
  readonly lanes: string[];
  readonly colours: string[];
  readonly binned: boolean;
  /** Per lane: µs deltas (exact) or column indices (binned). */
  readonly marks: number[][];
}
type PlotOut = XyPlotOut | RolePlotOut | EventPlotOut;
type HoldOut = { iv: number[] } | { cm: number[] };

interface LegendItem {
  readonly label: string;
  readonly colour: string;
  /** `line`, `band` (filled lane) or `hold`. */
  readonly swatch: 'line' | 'band' | 'hold';
  /** Series index for the hover read-out. */
  readonly s?: number;
  readonly note?: string;
}

// ---------------------------------------------------------------------------------------

interface Ctx {
  readonly t0: number; // data start, s on the input clock
  readonly t1: number;
  readonly origin: number; // subtracted for display
  readonly columns: number;
  readonly markerLimit: number;
  readonly stepLimit: number;
  readonly plots: PlotOut[];
  readonly holds: HoldOut[];
  readonly kinds: string[]; // every event kind in the report, for the CSS classes
}

/** The report as one self-contained HTML document. */
export function renderReport(input: ReportInput, options: RenderOptions = {}): string {
  const columns = Math.max(10, Math.floor(options.columns ?? DEFAULT_COLUMNS));
  const [t0, t1] = timeExtent(input);
  // Times that look like a wall clock (epoch seconds) are shown from the start of the data.
  const origin = t0 >= 0 && t1 < 1e6 ? 0 : t0;
  const ctx: Ctx = {
    t0,
    t1,
    origin,
    columns,
    markerLimit: options.markerLimit ?? DEFAULT_MARKER_LIMIT,
    stepLimit: options.stepLimit ?? DEFAULT_STEP_LIMIT,
    plots: [],
    holds: [],
    kinds: collectKinds(input.arms),
  };

  const armSteps = input.arms.map((arm) => changePoints(arm.held.t, arm.held.y));
  const holdNotes: string[] = [];
  armSteps.forEach((s, i) => {
    const iv = onIntervals(s);
    if (iv.length / 2 > ctx.stepLimit) {
      ctx.holds.push({ cm: columnMask(iv, ctx) });
      holdNotes[i] = `${iv.length / 2} watchdog holds: shaded per column (every column with a hold is shaded).`;
    } else {
      ctx.holds.push({ iv: microDeltas(iv, t0) });
    }
  });

  // The internal force plot shades a hold of any arm: one union, so overlaps do not darken.
  const unionHold = ctx.holds.length > 1 ? unionOfHolds(armSteps.map(onIntervals), ctx) : 0;

  const armHtml = input.arms.map((arm, i) => renderArm(arm, i, ctx, armSteps[i]!, holdNotes[i]));
  const internalHtml = input.internalForce ? renderInternal(input.internalForce, input.arms, unionHold, ctx) : '';

  const totalEvents = input.arms.reduce((n, a) => n + a.events.length, 0);
  const span = t1 - t0;
  const payload = {
    v: 1,
    t0: t0 - origin,
    t1: t1 - origin,
    cols: columns,
    holds: ctx.holds,
    plots: ctx.plots,
  };

  const nav: string[] = ['<a href="#summary">Summary</a>'];
  if (input.checks) nav.push('<a href="#checks">Expectations</a>');
  input.arms.forEach((a, i) => nav.push(`<a href="#arm-${i}">Arm ${escapeHtml(a.name)}</a>`));
  if (input.internalForce) nav.push('<a href="#internal">Internal force</a>');
  if (input.calibration) nav.push('<a href="#calibration">Calibration</a>');
  if (input.plan) nav.push('<a href="#plan">Plan view</a>');

  const meta = [
    `${input.arms.length} arm${input.arms.length === 1 ? '' : 's'}`,
    `${fmtSeconds(span)} of data`,
    `${totalEvents} event${totalEvents === 1 ? '' : 's'}`,
  ];
  const originNote =
    origin !== 0
      ? `<p class="meta">Times are shown from the start of the data: 0 s is ${escapeHtml(origin.toFixed(6))} s on the record's clock.</p>`
      : '';

  const scriptHash = createHash('sha256').update(CLIENT_SCRIPT, 'utf8').digest('base64');
  const planHash = input.plan ? ` 'sha256-${createHash('sha256').update(PLAN_SCRIPT, 'utf8').digest('base64')}'` : '';
  const csp = `default-src 'none'; script-src 'sha256-${scriptHash}'${planHash}; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'`;

  return [
    '<!DOCTYPE html>',
    '<html lang="en"><head><meta charset="utf-8">',
    `<meta http-equiv="Content-Security-Policy" content="${escapeHtml(csp)}">`,
    '<meta name="viewport" content="width=device-width, initial-scale=1">',
    `<title>${escapeHtml(input.title)}</title>`,
    `<style>${CSS}${kindCss(ctx.kinds)}${input.plan ? PLAN_CSS : ''}</style>`,
    '</head><body>',
    '<header>',
    `<h1>${escapeHtml(input.title)}</h1>`,
    `<p class="sub">${escapeHtml(input.subtitle)}</p>`,
    `<p class="meta">${meta.map(escapeHtml).join(' · ')}</p>`,
    originNote,
    `<nav>${nav.join('')}</nav>`,
    '</header>',
    '<main>',
    renderSummary(input.summary),
    input.checks ? renderChecks(input.checks) : '',
    ...armHtml,
    internalHtml,
    input.calibration ? renderCalibration(input.calibration) : '',
    input.plan ? renderPlanSection(input.plan.side !== undefined) : '',
    '</main>',
    `<footer><p>How to read the plots: each plot has ${columns} time columns over the same time span; a continuous series is drawn as the band from its least to its greatest value in each column, so a single-sample spike stays visible. Roles and watchdog holds are drawn from their exact change points; a hold shorter than a column is widened to stay visible. Move the pointer over a plot for the time and the values (min…max of the column) at that time.</p><p>antiphon report</p></footer>`,
    `<script type="application/json" id="antiphon-data">${scriptJson(payload)}</script>`,
    `<script>${CLIENT_SCRIPT}</script>`,
    input.plan ? `<script type="application/json" id="antiphon-plan">${scriptJson(planPayload(input, input.plan))}</script>` : '',
    input.plan ? `<script>${PLAN_SCRIPT}</script>` : '',
    '</body></html>',
    '',
  ].join('\n');
}

// ---------------------------------------------------------------------------------------
// Sections

function renderSummary(rows: ReportInput['summary']): string {
  const body = rows.map(([k, v]) => `<tr><th scope="row">${escapeHtml(k)}</th><td>${escapeHtml(v)}</td></tr>`).join('');
  return `<section id="summary"><h2>Summary</h2>${
    rows.length ? `<table class="kv"><tbody>${body}</tbody></table>` : '<p class="note">No summary rows.</p>'
  }</section>`;
}

function renderChecks(checks: NonNullable<ReportInput['checks']>): string {
  const passed = checks.filter((c) => c.verdict === 'pass').length;
  const failed = checks.length - passed;
  const rows = checks
    .map((c) => {
      const ok = c.verdict === 'pass';
      const verdict = ok
        ? '<span class="verdict pass"><span aria-hidden="true">✓</span> PASS</span>'
        : '<span class="verdict fail"><span aria-hidden="true">✗</span> FAIL</span>';
      return `<tr class="${ok ? 'pass' : 'fail'}"><td>${verdict}</td><td>${escapeHtml(c.name)}</td><td>${escapeHtml(c.expected ?? '')}</td><td>${escapeHtml(c.measured)}</td></tr>`;
    })
    .join('');
  const headline =
    failed === 0
      ? `<p class="tally ok">All ${checks.length} expectation${checks.length === 1 ? '' : 's'} passed.</p>`
      : `<p class="tally bad">${failed} of ${checks.length} expectation${checks.length === 1 ? '' : 's'} failed; ${passed} passed.</p>`;
  return `<section id="checks"><h2>Expectations</h2>${headline}<table class="checks"><thead><tr><th>verdict</th><th>expectation</th><th>expected</th><th>measured</th></tr></thead><tbody>${rows}</tbody></table></section>`;
}

function renderArm(arm: ReportArm, index: number, ctx: Ctx, held: Steps, holdNote: string | undefined): string {
  const parts: string[] = [`<section class="arm" id="arm-${index}"><h2>Arm ${escapeHtml(arm.name)}</h2>`];
  const holds = [index];
  const holdItem: LegendItem = { label: 'watchdog hold', colour: '#a8740c', swatch: 'hold' };
  const notes = holdNote ? [holdNote] : [];
  const nHolds = onIntervals(held).length / 2;

  // Force magnitudes. Before the tare, raw is the untared reading (weight and sensor offset in it).
  const taredEvent = arm.events.find((e) => e.kind === 'tared');
  const taredAt = taredEvent ? taredEvent.t_s : null;
  parts.push(
    xyPlot(ctx, {
      title: 'Force magnitude',
      yLabel: 'force (N)',
      includeZero: true,
      holds,
      series: [
        { label: taredAt === null ? 'raw (never tared)' : `raw (tared from ${taredAt.toFixed(2)} s; untared before)`, colour: C.raw, width: 1.6, series: arm.rawForce },
        { label: 'correction band', colour: C.correction, width: 1.2, series: arm.correctionForce },
        { label: 'impact band', colour: C.impact, width: 1.2, series: arm.impactForce },
      ],
      extraLegend: [holdItem],
      height: 230,
      notes,
    }),
  );

  // Role timeline.
  const roleSteps = changePoints(arm.role.t, arm.role.y);
  const nRoleChanges = Math.max(0, roleSteps.t.length - 1);
  let steps: RolePlotOut['steps'];
  const roleNotes = [...notes];
  if (roleSteps.t.length > ctx.stepLimit) {
    steps = { cm: roleColumnMask(roleSteps, ctx) };
    roleNotes.push(
      `${nRoleChanges} role changes: drawn per column (each column shows every role taken in it); exact change times are not embedded.`,
    );
  } else {
    steps = {
      t: microDeltas(roleSteps.t, ctx.t0),
      y: Array.from(roleSteps.y, (v) => (Number.isFinite(v) ? v : null)),
      end: Number.isFinite(roleSteps.end) ? Math.round((roleSteps.end - ctx.t0) * 1e6) : 0,
    };
  }
  parts.push(
    plotFigure(
      ctx,
      { kind: 'role', holds, lanes: ['speaker', 'listener'], colours: [C.speaker, C.listener], steps },
      'Role',
      [
        { label: 'speaker', colour: C.speaker, swatch: 'band' },
        { label: 'listener', colour: C.listener, swatch: 'band' },
        holdItem,
      ],
      96,
      [`${nRoleChanges} role change${nRoleChanges === 1 ? '' : 's'}, ${nHolds} watchdog hold${nHolds === 1 ? '' : 's'}.`, ...roleNotes],
    ),
  );

  // Event lanes: one per kind, at most MAX_LANES (further kinds share the last lane).
  const sorted = sortEvents(arm.events);
  const present = new Set(arm.events.map((e) => e.kind));
  const armKinds = ctx.kinds.filter((k) => present.has(k));
  if (armKinds.length > 0) {
    const shared = armKinds.length > MAX_LANES;
    const own = shared ? armKinds.slice(0, MAX_LANES - 1) : armKinds;
    const laneOf = new Map(armKinds.map((k, i) => [k, Math.min(i, own.length)]));
    const lanes = shared ? [...own, `${armKinds.length - own.length} other kinds`] : own;
    const colours = lanes.map((k, i) => (i < own.length ? kindColour(k, ctx.kinds) : OTHER_LANE_COLOUR));
    const binned = arm.events.length > ctx.markerLimit;
    const times: number[][] = lanes.map(() => []);
    for (const e of sorted) if (Number.isFinite(e.t_s)) times[laneOf.get(e.kind)!]!.push(e.t_s);
    const marks = times.map((ts) => (binned ? binColumns(ts, ctx) : microDeltas(ts, ctx.t0)));
    const evNotes: string[] = [];
    if (binned) {
      evNotes.push(
        `${arm.events.length} events, more than ${ctx.markerLimit}: markers are drawn one per time column and kind, not one per event. The table below lists all ${arm.events.length}.`,
      );
    }
    if (shared) evNotes.push(`${armKinds.length} event kinds: the last lane holds the ${armKinds.length - own.length} kinds after the first ${own.length}.`);
    parts.push(
      plotFigure(
        ctx,
        { kind: 'events', holds, lanes: lanes.map(laneLabel), colours, binned, marks },
        'Events',
        [...lanes.map((k, i) => ({ label: laneLabel(k), colour: colours[i]!, swatch: 'band' as const })), holdItem],
        M_TOP_BOTTOM + 20 * lanes.length,
        evNotes,
      ),
    );
  }

  // Belief over the hidden zones.
  const zones = arm.hiddenZones;
  if (zones.length === 0) {
    parts.push('<figure class="plot empty"><figcaption><h3>Belief over hidden zones</h3></figcaption><p class="note">This arm has no zones hidden from it.</p></figure>');
  } else {
    const rows = Math.min(arm.beliefT.length, Math.floor(arm.beliefMarginals.length / zones.length));
    const bt = arm.beliefT.subarray(0, rows);
    parts.push(
      xyPlot(ctx, {
        title: 'Belief over hidden zones',
        yLabel: 'P(occupied)',
        fixed: [-0.04, 1.04],
        holds,
        series: zones.map((z, j) => ({
          label: `${z} occupied`,
          colour: C.zones[j % C.zones.length]!,
          width: 1.6,
          strided: { t: bt, y: arm.beliefMarginals, offset: j, stride: zones.length },
        })),
        extraLegend: [holdItem],
        height: 200,
        notes: [...notes, 'The belief changes only while this arm listens (it reads its partner\'s corrections then) and is held flat while it speaks, so its line moves in steps, one stretch per listening slot.'],
      }),
    );
  }

  // Speeds.
  parts.push(
    xyPlot(ctx, {
      title: 'Tool speed',
      yLabel: 'speed (m/s)',
      includeZero: true,
      holds,
      series: [
        // Measured first, so the recommended line is drawn over it.
        { label: 'measured', colour: C.measured, width: 1.1, series: arm.measuredSpeed },
        { label: 'recommended', colour: C.recommended, width: 1.5, series: arm.recommendedSpeed },
      ],
      extraLegend: [holdItem],
      height: 200,
      notes,
    }),
  );

  parts.push(renderEventTable(arm, sorted, index, ctx));
  parts.push('</section>');
  return parts.join('\n');
}

function renderInternal(series: ReportSeries, arms: readonly ReportArm[], holdIndex: number, ctx: Ctx): string {
  return [
    '<section id="internal"><h2>Internal force</h2>',
    xyPlot(ctx, {
      title: 'Opposing force between the arms along the object',
      yLabel: 'force (N)',
      includeZero: true,
      holds: arms.length > 0 ? [holdIndex] : [],
      series: [{ label: 'internal force (+ squeeze, − pull apart)', colour: C.internal, width: 1.4, series }],
      extraLegend: [{ label: arms.length > 1 ? 'watchdog hold (any arm)' : 'watchdog hold', colour: '#a8740c', swatch: 'hold' }],
      height: 220,
      notes: [],
    }),
    '</section>',
  ].join('\n');
}

/**
 * The reliability diagram as inline SVG (static: no script, no data in the payload): per bin of
 * predicted probability a bar up to the observed frequency and a dot at (mean predicted,
 * observed), over the diagonal of a calibrated belief; then the bins as a table.
 */
export function renderCalibration(c: ReportCalibration): string {
  const W = 300, H = 300, L = 46, R = 12, T = 10, B = 40;
  const pw = W - L - R, ph = H - T - B;
  const x = (p: number) => L + p * pw;
  const y = (p: number) => T + (1 - p) * ph;
  const f3 = (v: number) => Number(v.toFixed(3)).toString();
  const parts: string[] = [];
  parts.push(`<svg class="reliability" viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="Reliability diagram: observed frequency against predicted probability">`);
  parts.push(`<rect x="${L}" y="${T}" width="${pw}" height="${ph}" fill="#fff" stroke="#a9a398"/>`);
  for (let k = 1; k < 10; k++) {
    const g = k / 10;
    parts.push(`<line x1="${f3(x(g))}" y1="${T}" x2="${f3(x(g))}" y2="${T + ph}" stroke="#ebe8e1"/><line x1="${L}" y1="${f3(y(g))}" x2="${L + pw}" y2="${f3(y(g))}" stroke="#ebe8e1"/>`);
  }
  c.bins.forEach((b, i) => {
    if (b.count === 0 || b.observed_frequency === null || b.mean_predicted === null) return;
    const x0 = x(b.lo) + 1, x1 = x(b.hi) - 1;
    const top = y(b.observed_frequency);
    const tip = `${f3(b.lo)}–${f3(b.hi)}: ${b.count} pairs, mean predicted ${f3(b.mean_predicted)}, observed ${f3(b.observed_frequency)}`;
    parts.push(`<rect class="bar" data-bin="${i}" data-count="${b.count}" x="${f3(x0)}" y="${f3(top)}" width="${f3(x1 - x0)}" height="${f3(T + ph - top)}" fill="${C.correction}" fill-opacity="0.35"><title>${escapeHtml(tip)}</title></rect>`);
    parts.push(`<circle class="conf" data-bin="${i}" cx="${f3(x(b.mean_predicted))}" cy="${f3(top)}" r="3.5" fill="${C.impact}"><title>${escapeHtml(tip)}</title></circle>`);
  });
  parts.push(`<line class="diagonal" x1="${x(0)}" y1="${y(0)}" x2="${x(1)}" y2="${y(1)}" stroke="#1d232a" stroke-dasharray="4 3"/>`);
  for (let k = 0; k <= 10; k += 2) {
    const g = k / 10;
    parts.push(`<text x="${f3(x(g))}" y="${T + ph + 14}" text-anchor="middle" font-size="10" fill="#5d646e">${g.toFixed(1)}</text>`);
    parts.push(`<text x="${L - 5}" y="${f3(y(g) + 3)}" text-anchor="end" font-size="10" fill="#5d646e">${g.toFixed(1)}</text>`);
  }
  parts.push(`<text x="${L + pw / 2}" y="${H - 6}" text-anchor="middle" font-size="11" fill="#1d232a">predicted probability (occupied)</text>`);
  parts.push(`<text transform="translate(12 ${T + ph / 2}) rotate(-90)" text-anchor="middle" font-size="11" fill="#1d232a">observed frequency</text>`);
  parts.push('</svg>');
  const fmt = (v: number | null, d: number) => (v === null ? '–' : v.toFixed(d));
  const rows = c.bins
    .map((b) => `<tr><td>${f3(b.lo)}–${f3(b.hi)}</td><td>${b.count}</td><td>${fmt(b.mean_predicted, 3)}</td><td>${fmt(b.observed_frequency, 3)}</td></tr>`)
    .join('');
  const headline = escapeHtml(`${c.updates} pairs (${c.what}); expected calibration error ${fmt(c.ece, 3)}; P(truth) < 0.05 in ${c.p_truth_below_0_05_rate === null ? '–' : (100 * c.p_truth_below_0_05_rate).toFixed(2) + ' %'} of the pairs.`);
  return [
    '<section id="calibration"><h2>Belief calibration</h2>',
    `<p class="tally">${headline}</p>`,
    '<div class="calib">',
    parts.join(''),
    `<table class="bins"><thead><tr><th>predicted</th><th>pairs</th><th>mean predicted</th><th>observed</th></tr></thead><tbody>${rows}</tbody></table>`,
    '</div>',
    '<p class="note">Bars: the observed frequency of occupied in each bin of predicted probability; dots: the bin\'s mean prediction; dashed: a calibrated belief. The expected calibration error weighs each bin\'s gap between the two by its share of the pairs.</p>',
    '</section>',
  ].join('\n');
}

function renderEventTable(arm: ReportArm, sorted: readonly ReportEvent[], index: number, ctx: Ctx): string {
  const n = sorted.length;
  if (n === 0) return `<div class="events"><h3>Events (0)</h3><p class="note">No events.</p></div>`;
  const counts = new Map<string, number>();
  for (const e of sorted) counts.set(e.kind, (counts.get(e.kind) ?? 0) + 1);
  const options = [`<option value="all">all kinds (${n})</option>`];
  for (const k of ctx.kinds) {
    const c = counts.get(k);
    if (c) options.push(`<option value="${ctx.kinds.indexOf(k)}">${escapeHtml(k)} (${c})</option>`);
  }
  const bodyId = `events-${index}`;
  const rows = new Array<string>(n);
  for (let i = 0; i < n; i++) {
    const e = sorted[i]!;
    const k = ctx.kinds.indexOf(e.kind);
    rows[i] = `<tr data-k="${k}"><td>${seconds3(e.t_s - ctx.origin)}</td><td class="k k${k}">${escapeHtml(e.kind)}</td><td>${escapeHtml(e.text)}</td></tr>`;
  }
  return [
    `<div class="events"><h3>Events (${n})</h3>`,
    `<p class="filter"><label>Show <select data-filter="${bodyId}">${options.join('')}</select></label></p>`,
    `<div class="scroll${n > 14 ? ' tall' : ''}"><table class="events"><thead><tr><th>time (s)</th><th>kind</th><th>text</th></tr></thead><tbody id="${bodyId}">`,
    rows.join('\n'),
    '</tbody></table></div></div>',
  ].join('\n');
}

// ---------------------------------------------------------------------------------------
// Plots

const M_TOP_BOTTOM = 50;

interface XySpec {
  readonly title: string;
  readonly yLabel: string;
  readonly includeZero?: boolean;
  readonly fixed?: readonly [number, number];
  readonly holds: number[];
  readonly series: readonly {
    readonly label: string;
    readonly colour: string;
    readonly width: number;
    readonly series?: ReportSeries;
    readonly strided?: { readonly t: Float64Array; readonly y: Float64Array; readonly offset: number; readonly stride: number };
  }[];
  readonly extraLegend: readonly LegendItem[];
  readonly height: number;
  readonly notes: readonly string[];
}

function xyPlot(ctx: Ctx, spec: XySpec): string {
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  const outs: SeriesOut[] = [];
  const legend: LegendItem[] = [];
  spec.series.forEach((s, j) => {
    const t = s.series ? s.series.t : s.strided!.t;
    const n = s.series ? Math.min(s.series.t.length, s.series.y.length) : s.strided!.t.length;
    const env = s.series
      ? envelope(s.series.t, s.series.y, ctx.t0, ctx.t1, ctx.columns)
      : envelopeStrided(s.strided!.t, s.strided!.y, s.strided!.offset, s.strided!.stride, ctx.t0, ctx.t1, ctx.columns);
    const [a] = finiteRange(env.min);
    const [, b] = finiteRange(env.max);
    if (a < lo) lo = a;
    if (b > hi) hi = b;
    const spacing = typicalSpacing(t);
    const gap = Number.isFinite(spacing) ? 10 * spacing : 0;
    const base = { c: s.colour, w: s.width, gap: round6(gap) };
    const finite = countFinite(env.count);
    let out: SeriesOut;
    if (finite > 0 && finite <= ctx.columns) {
      // Sparse enough to embed the samples themselves.
      const pt: number[] = [];
      const py: Num[] = [];
      const ys = s.series ? s.series.y : s.strided!.y;
      const off = s.series ? 0 : s.strided!.offset;
      const stride = s.series ? 1 : s.strided!.stride;
      for (let i = 0; i < n; i++) {
        const v = ys[off + i * stride]!;
        if (!Number.isFinite(t[i]!) || !Number.isFinite(v)) continue;
        pt.push(t[i]!);
        py.push(round4(v));
      }
      out = { ...base, pt: microDeltas(pt, ctx.t0), py };
    } else {
      out = { ...base, mn: roundArray(env.min), mx: roundArray(env.max) };
    }
    outs.push(out);
    legend.push({ label: s.label, colour: s.colour, swatch: 'line', s: j, note: finite === 0 ? 'no data' : undefined });
  });
  let range: [number, number];
  if (spec.fixed) range = [spec.fixed[0], spec.fixed[1]];
  else {
    if (!(lo <= hi)) [lo, hi] = [0, 1];
    if (spec.includeZero) {
      lo = Math.min(lo, 0);
      hi = Math.max(hi, 0);
    }
    if (hi - lo < 1e-12) hi = lo + (Math.abs(lo) > 0 ? Math.abs(lo) * 0.1 : 1);
    const pad = (hi - lo) * 0.05;
    range = [lo < 0 ? lo - pad : lo, hi + pad];
  }
  const plot: XyPlotOut = { kind: 'xy', holds: spec.holds, y: { label: spec.yLabel, lo: range[0], hi: range[1] }, series: outs };
  return plotFigure(ctx, plot, spec.title, [...legend, ...spec.extraLegend], spec.height, spec.notes);
}

function plotFigure(ctx: Ctx, plot: PlotOut, title: string, legend: readonly LegendItem[], height: number, notes: readonly string[]): string {
  const index = ctx.plots.length;
  ctx.plots.push(plot);
  const items = legend
    .map((l) => {
      const sw = `<i class="sw ${l.swatch}" data-color="${escapeHtml(l.colour)}" style="--c:${escapeHtml(l.colour)}"></i>`;
      const rv = l.s !== undefined ? ` <span class="rv" data-s="${l.s}"></span>` : '';
      const note = l.note ? ` <em>(${escapeHtml(l.note)})</em>` : '';
      return `<li>${sw}${escapeHtml(l.label)}${note}${rv}</li>`;
    })
    .join('');
  const noteHtml = notes.map((n) => `<p class="note">${escapeHtml(n)}</p>`).join('');
  return [
    `<figure class="plot" data-plot="${index}" data-kind="${plot.kind}">`,
    `<figcaption><h3>${escapeHtml(title)}</h3><ul class="legend">${items}</ul><span class="tread" aria-live="off"></span></figcaption>`,
    `<div class="wrap"><canvas data-plot="${index}" data-h="${height}" height="${height}" role="img" aria-label="${escapeHtml(title)} over time"></canvas><div class="cursor" hidden></div></div>`,
    noteHtml,
    '</figure>',
  ].join('');
}

// ---------------------------------------------------------------------------------------
// Helpers

function timeExtent(input: ReportInput): [number, number] {
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  const take = (a: ArrayLike<number>): void => {
    const [a0, a1] = finiteRange(a);
    if (a0 < lo) lo = a0;
    if (a1 > hi) hi = a1;
  };
  for (const arm of input.arms) {
    for (const s of [arm.rawForce, arm.correctionForce, arm.impactForce, arm.role, arm.held, arm.recommendedSpeed, arm.measuredSpeed]) take(s.t);
    take(arm.beliefT);
    for (const e of arm.events) {
      if (!Number.isFinite(e.t_s)) continue;
      if (e.t_s < lo) lo = e.t_s;
      if (e.t_s > hi) hi = e.t_s;
    }
  }
  if (input.internalForce) take(input.internalForce.t);
  if (!(lo <= hi)) return [0, 1];
  if (hi === lo) return [lo - 0.5, hi + 0.5];
  return [lo, hi];
}

/** Appends the union of the arms' hold intervals to ctx.holds and returns its index. */
function unionOfHolds(perArm: readonly Float64Array[], ctx: Ctx): number {
  const index = ctx.holds.length;
  if (ctx.holds.some((h) => 'cm' in h)) {
    const m = new Array<number>(ctx.columns).fill(0);
    for (const iv of perArm) columnMask(iv, ctx).forEach((v, c) => (m[c] = m[c]! | v));
    ctx.holds.push({ cm: m });
    return index;
  }
  const all: [number, number][] = [];
  for (const iv of perArm) for (let k = 0; k + 1 < iv.length; k += 2) all.push([Math.min(iv[k]!, iv[k + 1]!), Math.max(iv[k]!, iv[k + 1]!)]);
  all.sort((a, b) => a[0] - b[0]);
  const merged: number[] = [];
  for (const [a, b] of all) {
    const n = merged.length;
    if (n > 0 && a <= merged[n - 1]!) merged[n - 1] = Math.max(merged[n - 1]!, b);
    else merged.push(a, b);
  }
  ctx.holds.push({ iv: microDeltas(merged, ctx.t0) });
  return index;
}

function collectKinds(arms: readonly ReportArm[]): string[] {
  const seen = new Set<string>();
  for (const a of arms) for (const e of a.events) seen.add(e.kind);
  const known = KIND_ORDER.filter((k) => seen.has(k));
  const others = [...seen].filter((k) => !KIND_ORDER.includes(k)).sort();
  return [...known, ...others];
}

function kindColour(kind: string, kinds: readonly string[]): string {
  const known = KIND_COLOURS.get(kind);
  if (known) return known;
  const others = kinds.filter((k) => !KIND_COLOURS.has(k));
  return OTHER_KIND_COLOURS[Math.max(0, others.indexOf(kind)) % OTHER_KIND_COLOURS.length]!;
}

function kindCss(kinds: readonly string[]): string {
  return kinds.map((k, i) => `td.k${i}::before{background:${kindColour(k, kinds)}}`).join('');
}

function sortEvents(events: readonly ReportEvent[]): ReportEvent[] {
  const idx = events.map((_, i) => i);
  const key = (e: ReportEvent): number => (Number.isFinite(e.t_s) ? e.t_s : Number.POSITIVE_INFINITY);
  idx.sort((a, b) => key(events[a]!) - key(events[b]!) || a - b);
  return idx.map((i) => events[i]!);
}

function colOf(t: number, ctx: Ctx): number {
  return columnOf(t, ctx.t0, ctx.t1, ctx.columns);
}

/** Distinct column indices of sorted times. */
function binColumns(ts: readonly number[], ctx: Ctx): number[] {
  const out: number[] = [];
  for (const t of ts) {
    const c = colOf(t, ctx);
    if (out[out.length - 1] !== c) out.push(c);
  }
  return out;
}

/** 1 for each column that an interval [start, end] touches. */
function columnMask(iv: Float64Array, ctx: Ctx): number[] {
  const m = new Array<number>(ctx.columns).fill(0);
  for (let k = 0; k + 1 < iv.length; k += 2) {
    const a = colOf(Math.min(iv[k]!, iv[k + 1]!), ctx);
    const b = colOf(Math.max(iv[k]!, iv[k + 1]!), ctx);
    for (let c = a; c <= b; c++) m[c] = 1;
  }
  return m;
}

/** Per column, bit 1 if the role was speaker (0) in it at some time, bit 2 if listener (1). */
function roleColumnMask(steps: Steps, ctx: Ctx): number[] {
  const m = new Array<number>(ctx.columns).fill(0);
  const n = steps.t.length;
  for (let k = 0; k < n; k++) {
    const v = steps.y[k]!;
    const bit = v === 0 ? 1 : v === 1 ? 2 : 0;
    if (!bit) continue;
    const a = colOf(steps.t[k]!, ctx);
    const b = colOf(k + 1 < n ? steps.t[k + 1]! : steps.end, ctx);
    for (let c = Math.min(a, b); c <= Math.max(a, b); c++) m[c]! |= bit;
  }
  return m;
}

function countFinite(count: Uint32Array): number {
  let s = 0;
  for (let i = 0; i < count.length; i++) s += count[i]!;
  return s;
}

function round4(v: number): Num {
  return Number.isFinite(v) ? Number(v.toPrecision(4)) : null;
}

function round6(v: number): number {
  return Number.isFinite(v) ? Number(v.toPrecision(6)) : 0;
}

function roundArray(a: Float64Array): Num[] {
  const out = new Array<Num>(a.length);
  for (let i = 0; i < a.length; i++) out[i] = round4(a[i]!);
  return out;
}

function fmtSeconds(s: number): string {
  if (!Number.isFinite(s)) return '0 s';
  if (s < 120) return `${Number(s.toPrecision(4))} s`;
  const m = Math.floor(s / 60);
  const r = Math.round(s - m * 60);
  return `${s.toFixed(0)} s (${m} min ${r} s)`;
}

// ---------------------------------------------------------------------------------------

const CSS = `
:root{--ink:#1d232a;--muted:#5d646e;--rule:#d9d5cc;--paper:#fbfaf7;--pass:#2f6b2a;--fail:#a3271a}
*{box-sizing:border-box}
html{background:var(--paper);color:var(--ink);font:14px/1.45 system-ui,-apple-system,"Segoe UI",sans-serif}
body{margin:0 auto;max-width:1200px;padding:24px 28px 40px}
header{border-bottom:2px solid var(--ink);padding-bottom:10px;margin-bottom:18px}
h1{font-size:24px;margin:0 0 4px;font-weight:650;overflow-wrap:anywhere}
h2{font-size:18px;margin:28px 0 10px;padding-bottom:4px;border-bottom:1px solid var(--rule);overflow-wrap:anywhere}
h3{font-size:14px;margin:0;font-weight:650}
.sub{margin:0;font-size:15px;overflow-wrap:anywhere}
.meta{margin:4px 0 0;color:var(--muted)}
nav{margin-top:8px;display:flex;flex-wrap:wrap;gap:4px 16px}
nav a{color:var(--ink)}
table{border-collapse:collapse}
th,td{text-align:left;vertical-align:top;padding:3px 10px 3px 0;overflow-wrap:anywhere}
table.kv th{font-weight:500;color:var(--muted);padding-right:24px}
table.kv td{font-variant-numeric:tabular-nums}
table.checks{min-width:60%}
table.checks th,table.events th{border-bottom:1px solid var(--ink);font-weight:600}
table.checks td{border-bottom:1px solid var(--rule);padding:5px 14px 5px 0}
tr.fail td{background:#fbeeea}
.verdict{font-weight:700;letter-spacing:.04em;white-space:nowrap}
.verdict.pass{color:var(--pass)}
.verdict.fail{color:var(--fail)}
.tally{font-weight:600;margin:0 0 8px}
.tally.ok{color:var(--pass)}
.tally.bad{color:var(--fail)}
figure.plot{margin:0 0 14px}
figcaption{display:flex;flex-wrap:wrap;align-items:baseline;gap:4px 18px;margin-bottom:2px}
ul.legend{list-style:none;margin:0;padding:0;display:flex;flex-wrap:wrap;gap:2px 14px;color:var(--muted);font-size:12.5px}
ul.legend li{white-space:nowrap}
.sw{display:inline-block;width:18px;height:10px;margin-right:5px;vertical-align:-1px}
.sw.line{height:0;border-top:3px solid var(--c);vertical-align:3px}
.sw.band{background:var(--c)}
.sw.hold{background:rgba(222,166,36,.25);border-top:3px solid var(--c)}
.rv{color:var(--ink);font-variant-numeric:tabular-nums}
.tread{margin-left:auto;color:var(--ink);font-variant-numeric:tabular-nums;font-size:12.5px}
.wrap{position:relative}
canvas{display:block;width:100%;height:150px}
.cursor{position:absolute;top:10px;bottom:40px;width:1px;background:var(--ink);pointer-events:none}
.note{color:var(--muted);margin:2px 0 0;font-size:12.5px}
div.events{margin-top:6px}
.filter{margin:4px 0}
.scroll{border:1px solid var(--rule);background:#fff}
.scroll.tall{max-height:360px;overflow:auto}
table.events{width:100%;font-size:13px}
table.events th{position:sticky;top:0;background:#fff;padding:4px 10px}
table.events td{padding:2px 10px;border-bottom:1px solid #f0ede6}
table.events th:first-child{text-align:right}
table.events td:first-child{font-variant-numeric:tabular-nums;text-align:right;white-space:nowrap;width:7em}
table.events td.k{white-space:nowrap;width:8em}
td.k::before{content:"";display:inline-block;width:8px;height:8px;margin-right:6px;border-radius:1px;background:#777}
div.calib{display:flex;flex-wrap:wrap;gap:12px 28px;align-items:flex-start}
svg.reliability{flex:none;background:var(--paper)}
table.bins th{border-bottom:1px solid var(--ink);font-weight:600}
table.bins td{font-variant-numeric:tabular-nums;border-bottom:1px solid #f0ede6}
footer{margin-top:32px;border-top:1px solid var(--rule);color:var(--muted);font-size:12.5px}
@media print{.scroll.tall{max-height:none;overflow:visible}.tread,.cursor,.filter{display:none}}
`;
