/**
 * The compare report: one self-contained HTML file (inline CSS and SVG, no script, no network)
 * from one or more `compare` results (one per family). Per family: the strategy table, bars of
 * success rate (Wilson 95 %), mean peak internal force and mean time to goal (bootstrap 95 %)
 * with their intervals drawn as whiskers, the belief timing, and the paired results. Every input
 * string is escaped; the Content-Security-Policy admits no script at all.
 */
import { escapeHtml } from './encode.js';

/** What the report reads of a compare result (the shape of `compare --json`). */
export interface CompareReportRow {
  readonly label: string;
  readonly runs: number;
  readonly successes: number;
  readonly success_rate: number;
  readonly ci95: readonly [number, number];
  readonly collision_rate: number;
  readonly mean_peak_internal_force_n: number;
  readonly mean_time_s: number | null;
  readonly bootstrap95: { readonly mean_peak_internal_force_n: readonly [number, number] | null; readonly mean_time_s: readonly [number, number] | null };
  readonly belief: { readonly time_to_correct_s: { readonly median: number | null; readonly p95: number | null; readonly count: number; readonly unresolved: number }; readonly confident_wrong_s: { readonly mean: number | null; readonly max: number | null } };
  readonly holds_by_reason: Readonly<Record<string, number>>;
  readonly false_impact_holds: number;
}

export interface CompareReportPaired {
  readonly a: string;
  readonly b: string;
  readonly worlds: number;
  readonly success: PairedCell;
  readonly peak_internal_force_n: PairedCell;
  readonly time_s: PairedCell;
}
interface PairedCell {
  readonly wins: number;
  readonly losses: number;
  readonly ties: number;
  readonly test: string;
  readonly p: number;
  readonly median_difference: number | null;
}

export interface CompareReportFamily {
  readonly name: string;
  readonly worlds: number;
  readonly seed: number;
  readonly arm_model: string;
  readonly redraws: number | null;
  readonly strategies: readonly CompareReportRow[];
  readonly paired: readonly CompareReportPaired[];
}

const f = (v: number | null | undefined, d = 2) => (v === null || v === undefined || !Number.isFinite(v) ? '–' : v.toFixed(d));
const pv = (p: number) => (p < 0.001 ? p.toExponential(1) : p.toFixed(3));

/** Horizontal bars with interval whiskers, inline SVG. */
function bars(title: string, unit: string, items: readonly { label: string; value: number | null; ci: readonly [number, number] | null }[], fixedMax?: number): string {
  const W = 520, rowH = 20, left = 150, right = 60;
  const max = fixedMax ?? Math.max(1e-9, ...items.flatMap((i) => [i.value ?? 0, i.ci?.[1] ?? 0]));
  const x = (v: number) => left + ((W - left - right) * Math.max(0, v)) / max;
  const H = items.length * rowH + 24;
  const rows = items.map((it, k) => {
    const y = 18 + k * rowH;
    const bar = it.value === null ? '' : `<rect x="${left}" y="${y}" width="${(x(it.value) - left).toFixed(1)}" height="${rowH - 6}" fill="#17678a" opacity="0.75"/>`;
    const ci = it.ci ? `<line x1="${x(it.ci[0]).toFixed(1)}" x2="${x(it.ci[1]).toFixed(1)}" y1="${y + (rowH - 6) / 2}" y2="${y + (rowH - 6) / 2}" stroke="#1d232a" stroke-width="1.5"/><line x1="${x(it.ci[0]).toFixed(1)}" x2="${x(it.ci[0]).toFixed(1)}" y1="${y + 2}" y2="${y + rowH - 8}" stroke="#1d232a"/><line x1="${x(it.ci[1]).toFixed(1)}" x2="${x(it.ci[1]).toFixed(1)}" y1="${y + 2}" y2="${y + rowH - 8}" stroke="#1d232a"/>` : '';
    return `<text x="${left - 6}" y="${y + rowH - 9}" text-anchor="end">${escapeHtml(it.label)}</text>${bar}${ci}<text x="${W - right + 4}" y="${y + rowH - 9}">${escapeHtml(it.value === null ? '–' : it.value.toFixed(unit === '%' ? 1 : 2))}</text>`;
  });
  return `<figure><svg viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="${escapeHtml(title)}"><text x="0" y="12" class="t">${escapeHtml(title)}${unit ? ` (${escapeHtml(unit)})` : ''}; whiskers: 95 % interval</text>${rows.join('')}</svg></figure>`;
}

function familySection(fam: CompareReportFamily, k: number): string {
  const rows = fam.strategies
    .map((s) => {
      const holds = Object.entries(s.holds_by_reason).map(([r, n]) => `${escapeHtml(r)} ${n}`).join(', ') || '–';
      const tc = s.belief.time_to_correct_s;
      return `<tr><td>${escapeHtml(s.label)}</td><td>${s.successes}/${s.runs}</td><td>${f(100 * s.success_rate, 1)} % [${f(100 * s.ci95[0], 1)}, ${f(100 * s.ci95[1], 1)}]</td><td>${f(100 * s.collision_rate, 1)} %</td><td>${f(s.mean_peak_internal_force_n)} ${ci(s.bootstrap95.mean_peak_internal_force_n)}</td><td>${f(s.mean_time_s)} ${ci(s.bootstrap95.mean_time_s)}</td><td>${f(tc.median)} / ${f(tc.p95)} (${tc.count}, ${tc.unresolved} open)</td><td>${f(s.belief.confident_wrong_s.mean, 3)} / ${f(s.belief.confident_wrong_s.max, 3)}</td><td>${holds}</td><td>${s.false_impact_holds}</td></tr>`;
    })
    .join('\n');
  const paired = fam.paired
    .map((p) => {
      const cell = (c: PairedCell) => `${c.wins}/${c.losses}/${c.ties}, p ${pv(c.p)}${c.p < 0.05 ? ' *' : ''}`;
      return `<tr><td>${escapeHtml(p.a)}</td><td>${escapeHtml(p.b)}</td><td>${p.worlds}</td><td>${cell(p.success)}</td><td>${cell(p.peak_internal_force_n)} (median ${f(p.peak_internal_force_n.median_difference)} N)</td><td>${cell(p.time_s)} (median ${f(p.time_s.median_difference)} s)</td></tr>`;
    })
    .join('\n');
  const items = (get: (s: CompareReportRow) => { value: number | null; ci: readonly [number, number] | null }) => fam.strategies.map((s) => ({ label: s.label, ...get(s) }));
  return `<section id="family-${k}">
<h2>Family ${escapeHtml(fam.name)}</h2>
<p class="meta">${fam.worlds} worlds, seed ${fam.seed}, arms ${escapeHtml(fam.arm_model)}${fam.redraws === null ? '' : `; ${fam.redraws} redraws of worlds that failed the task checks`}</p>
<table><thead><tr><th>strategy</th><th>success</th><th>rate [Wilson 95 %]</th><th>collisions</th><th>peak F<sub>int</sub> N [bootstrap 95 %]</th><th>time s [bootstrap 95 %]</th><th>time to correct s median / p95 (n, open)</th><th>confident wrong s mean / max</th><th>holds by reason</th><th>false impact holds</th></tr></thead>
<tbody>
${rows}
</tbody></table>
<div class="figs">
${bars('Success rate', '%', items((s) => ({ value: 100 * s.success_rate, ci: [100 * s.ci95[0], 100 * s.ci95[1]] })), 100)}
${bars('Mean peak internal force', 'N', items((s) => ({ value: s.mean_peak_internal_force_n, ci: s.bootstrap95.mean_peak_internal_force_n })))}
${bars('Mean time to goal', 's', items((s) => ({ value: s.mean_time_s, ci: s.bootstrap95.mean_time_s })))}
</div>
<h3>Paired results (the same worlds)</h3>
<p class="meta">wins/losses/ties of the first strategy against the second. Success: two-sided exact sign test over the worlds where exactly one succeeded. Peak internal force (lower wins) and time to goal (lower wins, worlds where both succeeded): two-sided Wilcoxon signed-rank test (exact for up to 50 non-zero differences without ties, else the normal approximation). * p &lt; 0.05, not corrected for the number of pairs.</p>
<table><thead><tr><th>a</th><th>b</th><th>worlds</th><th>success (sign test)</th><th>peak internal force (Wilcoxon)</th><th>time (Wilcoxon)</th></tr></thead>
<tbody>
${paired}
</tbody></table>
</section>`;
}

function ci(c: readonly [number, number] | null): string {
  return c ? `[${f(c[0])}, ${f(c[1])}]` : '';
}

export function renderCompareReport(families: readonly CompareReportFamily[], title = 'antiphon compare'): string {
  const csp = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'";
  const nav = families.map((fam, k) => `<a href="#family-${k}">${escapeHtml(fam.name)}</a>`).join(' · ');
  return `<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><meta http-equiv="Content-Security-Policy" content="${csp}"><title>${escapeHtml(title)}</title>
<style>
body{font:14px/1.4 system-ui,sans-serif;margin:1.5em;color:#1d232a;background:#fbfbf9}
table{border-collapse:collapse;margin:.5em 0 1em}td,th{border:1px solid #c9ccd1;padding:2px 6px;text-align:right}td:first-child,th:first-child,td:nth-child(2){text-align:left}
th{background:#eef0f2}.meta{color:#555}.figs{display:flex;flex-wrap:wrap;gap:1em}svg text{font:12px system-ui,sans-serif;fill:#1d232a}svg .t{font-weight:600}
figure{margin:0}
</style></head><body>
<h1>${escapeHtml(title)}</h1>
<p class="meta">Simulated cell, every strategy on the same seeded worlds. Simulation results are not a safety assessment: defer to the cell's risk assessment (ISO 10218, ISO/TS 15066).</p>
<nav>${nav}</nav>
${families.map(familySection).join('\n')}
</body></html>
`;
}
