/**
 * report.html of a sweep: one self-contained page (inline SVG and CSS, no script, nothing
 * fetched): the ROC of the impact threshold, success and internal force against the role
 * period, the Pareto front, and every candidate in a table. Every text from the inputs is
 * escaped.
 */
import type { CandidateResult } from './objective.js';
import type { SweepDocument } from './run.js';
import { metricsText, tunedChanges } from './tuned.js';

const esc = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
const fmt = (v: number | null | undefined, d = 2) => (v === null || v === undefined || !Number.isFinite(v) ? '-' : v.toFixed(d));

interface Series {
  readonly label: string;
  readonly colour: string;
  readonly points: readonly { x: number; y: number; tag?: string; strong?: boolean }[];
  readonly line?: boolean;
}

const W = 420, H = 280, PAD = { l: 56, r: 16, t: 28, b: 44 };

function niceRange(lo: number, hi: number): [number, number] {
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) return [0, 1];
  if (lo === hi) return lo === 0 ? [0, 1] : [Math.min(0, lo), Math.max(0, hi) * 1.1 || 1];
  const pad = (hi - lo) * 0.08;
  return [lo - pad, hi + pad];
}

/** A scatter or line chart as inline SVG. */
export function chart(id: string, title: string, xLabel: string, yLabel: string, series: readonly Series[], fixed?: { x: [number, number]; y: [number, number] }): string {
  const all = series.flatMap((s) => s.points);
  const [x0, x1] = fixed?.x ?? niceRange(Math.min(...all.map((p) => p.x)), Math.max(...all.map((p) => p.x)));
  const [y0, y1] = fixed?.y ?? niceRange(Math.min(...all.map((p) => p.y)), Math.max(...all.map((p) => p.y)));
  const sx = (x: number) => PAD.l + ((x - x0) / (x1 - x0 || 1)) * (W - PAD.l - PAD.r);
  const sy = (y: number) => H - PAD.b - ((y - y0) / (y1 - y0 || 1)) * (H - PAD.t - PAD.b);
  const ticks = (a: number, b: number) => Array.from({ length: 5 }, (_, k) => a + ((b - a) * k) / 4);
  const parts: string[] = [];
  parts.push(`<svg id="${esc(id)}" class="chart" viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="${esc(title)}">`);
  parts.push(`<text x="${W / 2}" y="16" text-anchor="middle" class="title">${esc(title)}</text>`);
  parts.push(`<rect x="${PAD.l}" y="${PAD.t}" width="${W - PAD.l - PAD.r}" height="${H - PAD.t - PAD.b}" class="frame"/>`);
  for (const t of ticks(x0, x1)) parts.push(`<text x="${sx(t).toFixed(1)}" y="${H - PAD.b + 14}" text-anchor="middle" class="tick">${fmt(t, Math.abs(x1 - x0) < 5 ? 2 : 1)}</text>`);
  for (const t of ticks(y0, y1)) parts.push(`<text x="${PAD.l - 4}" y="${(sy(t) + 3).toFixed(1)}" text-anchor="end" class="tick">${fmt(t, Math.abs(y1 - y0) < 5 ? 2 : 1)}</text>`);
  parts.push(`<text x="${(PAD.l + W - PAD.r) / 2}" y="${H - 8}" text-anchor="middle" class="axis">${esc(xLabel)}</text>`);
  parts.push(`<text x="14" y="${(PAD.t + H - PAD.b) / 2}" text-anchor="middle" class="axis" transform="rotate(-90 14 ${(PAD.t + H - PAD.b) / 2})">${esc(yLabel)}</text>`);
  series.forEach((s, k) => {
    if (s.line && s.points.length > 1) parts.push(`<polyline fill="none" stroke="${s.colour}" stroke-width="1.5" points="${s.points.map((p) => `${sx(p.x).toFixed(1)},${sy(p.y).toFixed(1)}`).join(' ')}"/>`);
    for (const p of s.points) {
      parts.push(`<circle cx="${sx(p.x).toFixed(1)}" cy="${sy(p.y).toFixed(1)}" r="${p.strong ? 5 : 3}" fill="${s.colour}"${p.strong ? ' stroke="#000" stroke-width="1.5"' : ''}><title>${esc(`${s.label}: ${p.tag ?? ''} (${fmt(p.x, 3)}, ${fmt(p.y, 3)})`)}</title></circle>`);
      if (p.tag && s.points.length <= 12) parts.push(`<text x="${(sx(p.x) + 6).toFixed(1)}" y="${(sy(p.y) - 6).toFixed(1)}" class="tag">${esc(p.tag)}</text>`);
    }
    parts.push(`<rect x="${PAD.l + 8}" y="${PAD.t + 8 + 14 * k}" width="10" height="10" fill="${s.colour}"/><text x="${PAD.l + 22}" y="${PAD.t + 17 + 14 * k}" class="legend">${esc(s.label)}</text>`);
  });
  parts.push('</svg>');
  return parts.join('');
}

function slice(doc: SweepDocument, key: string): CandidateResult[] {
  const chosen = doc.candidates.find((c) => c.index === doc.chosen) ?? doc.candidates[0];
  if (!chosen) return [];
  return doc.candidates.filter((c) => Object.keys(c.values).every((k) => k === key || c.values[k] === chosen.values[k])).sort((a, b) => (a.values[key] as number) - (b.values[key] as number));
}

export function renderSweepReport(doc: SweepDocument): string {
  const sections: string[] = [];
  const chosen = doc.candidates.find((c) => c.index === doc.chosen);
  // ROC
  if (doc.roc) {
    const pts = doc.roc.points.map((p) => ({ x: p.fpr, y: p.tpr, tag: String(p.threshold), strong: p.index === doc.chosen }));
    sections.push(`<section><h2>Impact threshold: ROC</h2><p>Detection (labelled impacts flagged) against false holds (1 s bins outside impact windows holding a false hold's start), one point per value of <code>${esc(doc.roc.key)}</code> with the other keys at the chosen values. Area under the curve ${fmt(doc.roc.auc, 4)}.</p>${chart('roc', `ROC of ${doc.roc.key} (AUC ${fmt(doc.roc.auc, 3)})`, 'false-hold rate (bins)', 'detection rate', [{ label: 'chance', colour: '#bbb', line: true, points: [{ x: 0, y: 0 }, { x: 1, y: 1 }] }, { label: 'threshold N', colour: '#c0392b', line: true, points: pts }], { x: [0, 1], y: [0, 1.02] })}</section>`);
  } else sections.push('<section><h2>Impact threshold: ROC</h2><p>Not drawn: the threshold (wrench_filter.impact.force_n) is not swept, or no impact is labelled.</p></section>');
  // Role period
  if (doc.keys.includes('roles.period_s')) {
    const s = slice(doc, 'roles.period_s');
    const force = { label: 'peak internal force N', colour: '#2471a3', line: true, points: s.map((c) => ({ x: c.values['roles.period_s'] as number, y: c.metrics.peak_internal_force_n, strong: c.index === doc.chosen })) };
    const charts = [chart('period-force', 'internal force against role period', 'roles.period_s (s)', 'N', [force])];
    if (s.some((c) => c.metrics.success_rate !== null)) charts.unshift(chart('period-success', 'success against role period', 'roles.period_s (s)', 'success rate', [{ label: 'success rate', colour: '#239b56', line: true, points: s.map((c) => ({ x: c.values['roles.period_s'] as number, y: c.metrics.success_rate ?? 0, strong: c.index === doc.chosen })) }], { x: niceRange(Math.min(...s.map((c) => c.values['roles.period_s'] as number)), Math.max(...s.map((c) => c.values['roles.period_s'] as number))), y: [0, 1.02] }));
    else charts.unshift('<p>Success is not measured on recordings (the recommended twist moves nothing); sweep over <code>--worlds</code> for it.</p>');
    sections.push(`<section><h2>Role period</h2><p>Other keys at the chosen values.</p>${charts.join('')}</section>`);
  } else sections.push('<section><h2>Role period</h2><p>Not drawn: roles.period_s is not swept.</p></section>');
  // Pareto
  const front = new Set(doc.pareto ?? []);
  const sc = (c: CandidateResult) => ({ x: c.metrics.false_holds_per_hour, y: c.metrics.peak_internal_force_n, tag: `#${c.index}`, strong: c.index === doc.chosen });
  sections.push(`<section><h2>Pareto front</h2><p>Criteria, each minimised: missed impacts, false holds per hour, failure rate, peak internal force. ${front.size} of ${doc.candidates.length} candidates are on the front.</p>${chart('pareto', 'candidates: false holds against internal force', 'false holds per hour', 'peak internal force N', [{ label: 'dominated', colour: '#aaa', points: doc.candidates.filter((c) => !front.has(c.index)).map(sc) }, { label: 'Pareto front', colour: '#d35400', points: doc.candidates.filter((c) => front.has(c.index)).map(sc) }])}</section>`);
  // Table
  const head = ['#', ...doc.keys, 'missed', 'false holds/h', 'delay p50 s', 'delay p95 s', 'success', 'collisions', 'peak F_int N', 'ECE', 'front'];
  const rows = doc.candidates.map((c) => {
    const m = c.metrics;
    const cells = [String(c.index), ...doc.keys.map((k) => JSON.stringify(c.values[k])), `${m.missed_impacts}/${m.labelled_impacts}`, fmt(m.false_holds_per_hour, 1), fmt(m.detection_delay_s.median, 3), fmt(m.detection_delay_s.p95, 3), m.success_rate === null ? '-' : `${fmt(100 * m.success_rate, 1)} %`, m.collision_rate === null ? '-' : `${fmt(100 * m.collision_rate, 1)} %`, fmt(m.peak_internal_force_n, 2), fmt(m.belief_ece, 3), front.has(c.index) ? 'yes' : ''];
    return `<tr${c.index === doc.chosen ? ' class="chosen"' : ''}>${cells.map((x) => `<td>${esc(x)}</td>`).join('')}</tr>`;
  });
  sections.push(`<section><h2>Candidates</h2><table><thead><tr>${head.map((h) => `<th>${esc(h)}</th>`).join('')}</tr></thead><tbody>${rows.join('')}</tbody></table></section>`);
  const changes = tunedChanges(doc);
  const summary = chosen
    ? `<p>Chosen: candidate ${chosen.index} (${esc(Object.entries(chosen.values).map(([k, v]) => `${k} = ${JSON.stringify(v)}`).join(', '))}): ${esc(metricsText(chosen.metrics))}.</p><ul>${changes.map((c) => `<li><code>${esc(c.key)}</code>: ${esc(JSON.stringify(c.from))} → ${esc(JSON.stringify(c.to))}</li>`).join('') || '<li>no value differs from the base file</li>'}</ul>`
    : '<p>No candidate is admissible under the objective (every candidate misses a labelled impact): nothing chosen, tuned.yaml is the base file.</p>';
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>antiphon sweep ${esc(doc.sweep_id.slice(0, 8))}</title>
<style>
body{font:14px/1.45 system-ui,sans-serif;margin:1.5em auto;max-width:1100px;padding:0 1em;color:#222}
h1{font-size:1.4em}h2{font-size:1.15em;margin-top:1.6em}
.chart{background:#fff;margin:0.4em 1em 0.4em 0}.chart .frame{fill:none;stroke:#999}.chart .title{font-size:13px;font-weight:600}
.chart .tick,.chart .tag,.chart .legend{font-size:10px}.chart .axis{font-size:11px}
table{border-collapse:collapse;font-size:12px}td,th{border:1px solid #ccc;padding:2px 6px;text-align:right}tr.chosen{background:#fdebd0;font-weight:600}
.note{color:#555;font-size:12px}
</style></head><body>
<h1>antiphon sweep</h1>
<p>Sweep <code>${esc(doc.sweep_id)}</code>: ${doc.candidates.length} candidates over ${esc(doc.keys.join(', '))}; base ${esc(doc.base.file)}, space ${esc(doc.space.file)}; objective <b>${esc(doc.objective.name)}</b>: ${esc(doc.objective.description)}.</p>
<p class="note">${esc(String((doc.data as { note?: string }).note ?? ''))}</p>
${summary}
${sections.join('\n')}
<p class="note">The watchdog is not a safety-rated function: review every tuned value against the cell's risk assessment (ISO 10218, ISO/TS 15066, local codes) before use.</p>
</body></html>
`;
}
