/**
 * tuned.yaml: the base parameters file with only the chosen values changed, through the `yaml`
 * package's Document API so every comment and the layout stay. Each changed value carries an
 * inline comment with its evidence (the metrics of the chosen candidate, the nearest rival on
 * that key, and the data). The value is set in `/**` and in every section that set it itself;
 * the result is checked with the parameters loader before it is returned.
 */
import { isMap, isScalar, parseDocument, Scalar, type Document, type YAMLMap } from 'yaml';
import { cellFromFile } from '../params/config.js';
import { parseParamsText } from '../params/load.js';
import { resolveForArm } from '../params/load.js';
import { SPEC_BY_KEY } from '../params/schema.js';
import type { ParamValue } from '../params/spec.js';
import type { CandidateMetrics } from './evaluate.js';
import type { CandidateResult } from './objective.js';
import type { SweepDocument } from './run.js';

export interface TunedChange {
  readonly key: string;
  readonly from: ParamValue;
  readonly to: ParamValue;
  readonly evidence: string;
}

const f = (v: number | null | undefined, d = 2) => (v === null || v === undefined ? '-' : v.toFixed(d));

export function metricsText(m: CandidateMetrics): string {
  const parts = [`${f(m.false_holds_per_hour, 1)} false holds/h`];
  if (m.labelled_impacts > 0) parts.push(`missed ${m.missed_impacts} of ${m.labelled_impacts} impacts`, `delay p95 ${f(m.detection_delay_s.p95, 3)} s`);
  if (m.success_rate !== null) parts.push(`success ${f(100 * m.success_rate, 0)} %`);
  parts.push(`peak F_int ${f(m.peak_internal_force_n, 1)} N`);
  return parts.join(', ');
}

function dataText(doc: SweepDocument): string {
  const d = doc.data as { kind: string; bags?: { name: string; duration_s: number }[]; labels?: { file: string } | null; worlds?: number; seed?: number; family?: { name: string; file: string } };
  if (d.kind === 'bags') {
    const dur = (d.bags ?? []).reduce((a, b) => a + b.duration_s, 0);
    return `on ${d.bags!.length} bag(s) (${dur.toFixed(0)} s: ${d.bags!.map((b) => b.name).join(', ')})${d.labels ? `, labels ${d.labels.file}` : ''}`;
  }
  return `on ${d.worlds} simulated worlds (seed ${d.seed}${d.family ? `, family ${d.family.name} from ${d.family.file}` : ''}, synthetic)`;
}

/** The changes the chosen candidate makes to the base file, with their evidence. */
export function tunedChanges(doc: SweepDocument): TunedChange[] {
  if (doc.chosen === null) return [];
  const chosen = doc.candidates.find((c) => c.index === doc.chosen)!;
  const base = parseParamsText(doc.base.text, doc.base.file);
  const left = resolveForArm(base, 'left');
  const right = resolveForArm(base, 'right');
  const out: TunedChange[] = [];
  for (const key of doc.keys) {
    const to = chosen.values[key]!;
    const from = left.get(key)?.value ?? right.get(key)?.value;
    const same = JSON.stringify(left.get(key)?.value) === JSON.stringify(to) && JSON.stringify(right.get(key)?.value) === JSON.stringify(to);
    if (same || from === undefined) continue;
    // The nearest rival on this key: same values elsewhere, the next value of this key the objective ranks after.
    const others = doc.candidates.filter((c) => c.index !== chosen.index && Object.keys(c.values).every((k) => k === key || c.values[k] === chosen.values[k]));
    const rival = others.length ? rivalText(others, key) : '';
    out.push({ key, from, to, evidence: `sweep ${doc.sweep_id.slice(0, 8)} (${doc.objective.name}) was ${JSON.stringify(from)}: ${metricsText(chosen.metrics)}${rival}; ${dataText(doc)}` });
  }
  return out;
}

function rivalText(others: readonly CandidateResult[], key: string): string {
  const parts = others.slice(0, 3).map((c) => `${JSON.stringify(c.values[key])}: ${metricsText(c.metrics)}`);
  return `; vs ${parts.join('; ')}${others.length > 3 ? `; ${others.length - 3} more in sweep.json` : ''}`;
}

function scalarFor(key: string, v: ParamValue, comment: string): Scalar {
  const s = new Scalar(v);
  if (SPEC_BY_KEY.get(key)?.type === 'double' && typeof v === 'number' && Number.isInteger(v)) s.minFractionDigits = 1;
  s.comment = ` ${comment}`;
  return s;
}

/** tuned.yaml text: the base text with the changes, or the base text unchanged when nothing changes. */
export function tunedYaml(doc: SweepDocument): { text: string; changes: TunedChange[] } {
  const changes = tunedChanges(doc);
  const text = applyChanges(doc.base.text, changes.map((c) => ({ key: c.key, value: c.to, comment: `tuned: ${c.evidence}` })));
  // It must load like any parameters file (schema, ceilings, cross-key checks).
  cellFromFile(parseParamsText(text, 'tuned.yaml'), 'tuned.yaml');
  return { text, changes };
}

/**
 * Set dotted keys in a parameters file's text, keeping comments and layout: each value that is
 * already written is replaced in place (the value and the rest of its line, so its comment
 * becomes the evidence), located through the Document API's node ranges; only a key no section
 * writes is added, to `/**`, through the Document API (which then lays the file out anew).
 */
export function applyChanges(baseText: string, changes: readonly { key: string; value: ParamValue; comment: string }[]): string {
  if (changes.length === 0) return baseText;
  const doc: Document = parseDocument(baseText);
  const root = isMap(doc.contents) ? (doc.contents as unknown as YAMLMap) : null;
  const sections = root ? root.items.map((p) => (isScalar(p.key) ? String(p.key.value) : '')).filter((s) => s !== '') : [];
  const splices: { from: number; to: number; text: string }[] = [];
  const missing: typeof changes[number][] = [];
  for (const c of changes) {
    const parts = c.key.split('.');
    let found = false;
    for (const s of sections) {
      const node = doc.getIn([s, 'ros__parameters', ...parts], true) as Scalar | undefined;
      if (!node || !isScalar(node) || !node.range) continue;
      found = true;
      const from = node.range[0];
      let to = baseText.indexOf('\n', from);
      if (to < 0) to = baseText.length;
      splices.push({ from, to, text: `${valueText(c.key, c.value)}  # ${c.comment}` });
    }
    if (!found) missing.push(c);
  }
  splices.sort((a, b) => b.from - a.from);
  let text = baseText;
  for (const sp of splices) text = text.slice(0, sp.from) + sp.text + text.slice(sp.to);
  if (missing.length === 0) return text;
  const doc2: Document = parseDocument(text);
  if (!isMap(doc2.contents)) doc2.contents = doc2.createNode({}) as never;
  for (const c of missing) doc2.setIn(['/**', 'ros__parameters', ...c.key.split('.')], scalarFor(c.key, c.value, c.comment));
  return doc2.toString({ lineWidth: 0 });
}

function valueText(key: string, v: ParamValue): string {
  if (typeof v === 'number' && SPEC_BY_KEY.get(key)?.type === 'double' && Number.isInteger(v)) return v.toFixed(1);
  if (typeof v === 'string') return JSON.stringify(v);
  return String(v);
}
