/**
 * Labels of a sweep over bags: the times and kinds of known events, seconds from each bag's
 * start. From an events file (CSV or YAML, formats of our own) or from an expectations file
 * (`replay --expect`: each `hold` with `reason: impact` and `between_s: [a, b]` is an impact
 * labelled at a, detected up to b).
 *
 * CSV: a header naming the columns, then one event per line; `#` starts a comment line.
 *   bag,t_s,kind,arm,end_s          (t_s and kind required; bag, arm, end_s optional)
 *   knock-1,5.8,impact,left,
 * YAML:
 *   version: 1
 *   tolerance_s: 0.3                # detection window after an impact (optional, default 0.3)
 *   events:
 *     - { t_s: 5.8, kind: impact, arm: left, bag: knock-1 }
 *     - { t_s: 2.0, end_s: 3.5, kind: push }
 *
 * Kinds: `impact` (a knock antiphon must flag: missed if no impact is flagged from 20 ms
 * before it to `tolerance_s` after its end) and `push` (a deliberate push by a person or the
 * partner: a hold that starts during it is a false hold like any other). `bag` names the bag
 * folder or file (its last path component); it may be left out when the sweep reads one bag.
 */
import { basename } from 'node:path';
import { closest } from 'fastest-levenshtein';
import { isMap, isScalar, isSeq, type Node } from 'yaml';
import { loadExpectations } from '../replay/expect.js';
import { InputError, type Place, type Problem } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { parseYamlInput } from '../util/yaml.js';

export const LABEL_KINDS = ['impact', 'push'] as const;
export type LabelKind = (typeof LABEL_KINDS)[number];
export const DEFAULT_TOLERANCE_S = 0.3;
export { EARLY_S } from './roc-bins.js';

export interface Label {
  /** Bag name as given (matched against each bag's last path component); null: the only bag. */
  readonly bag: string | null;
  readonly t_s: number;
  readonly end_s: number;
  readonly kind: LabelKind;
  readonly arm: 'left' | 'right' | 'both';
  readonly where: Place;
}

export interface Labels {
  readonly path: string | null;
  readonly tolerance_s: number;
  readonly events: readonly Label[];
}

export const NO_LABELS: Labels = { path: null, tolerance_s: DEFAULT_TOLERANCE_S, events: [] };

export function loadLabels(path: string): Labels {
  const text = readInputText(path, { what: 'labels file', code: 'labels', maxBytes: INPUT_LIMITS.expectations, option: '--labels' });
  if (/\.csv$/i.test(path)) return parseLabelsCsv(text, path);
  if (/^\s*expect\s*:/m.test(text)) {
    const exps = loadExpectations(path);
    const events: Label[] = [];
    for (const e of exps) {
      const a = e.args as { arm?: string; reason?: string; between_s?: [number, number] };
      if (e.kind !== 'hold' || a.reason !== 'impact' || !a.between_s) continue;
      events.push({ bag: null, t_s: a.between_s[0], end_s: a.between_s[0], kind: 'impact', arm: (a.arm ?? 'both') as Label['arm'], where: { file: path, ...(e.line !== undefined ? { line: e.line, column: e.column } : {}) } });
    }
    const tol = exps.filter((e) => e.kind === 'hold' && (e.args as { reason?: string }).reason === 'impact' && (e.args as { between_s?: number[] }).between_s);
    // The window of the first such expectation sets the tolerance (they share one in practice).
    const first = tol[0]?.args as { between_s?: [number, number] } | undefined;
    return { path, tolerance_s: first?.between_s ? Math.max(0, first.between_s[1] - first.between_s[0]) : DEFAULT_TOLERANCE_S, events };
  }
  return parseLabelsYaml(text, path);
}

function checkEvent(raw: Record<string, unknown>, where: Place, problems: Problem[]): Label | undefined {
  const before = problems.length;
  const num = (k: string): number | undefined => {
    const v = raw[k];
    if (v === undefined || v === '') return undefined;
    const n = typeof v === 'bigint' ? Number(v) : typeof v === 'number' ? v : typeof v === 'string' ? Number(v) : Number.NaN;
    if (!Number.isFinite(n) || n < 0) {
      problems.push({ code: 'labels.bad_time', message: `${k} must be a time in seconds from the bag start (0 or more), got ${JSON.stringify(String(v))}`, where });
      return undefined;
    }
    return n;
  };
  const t = num('t_s');
  if (raw['t_s'] === undefined || raw['t_s'] === '') problems.push({ code: 'labels.missing', message: 'an event needs t_s', where, hint: 'seconds from the bag start' });
  const end = num('end_s');
  const kind = String(raw['kind'] ?? '');
  if (!(LABEL_KINDS as readonly string[]).includes(kind)) problems.push({ code: 'labels.bad_kind', message: `unknown event kind '${kind}'`, where, hint: `did you mean ${closest(kind, [...LABEL_KINDS])}? kinds: ${LABEL_KINDS.join(', ')}` });
  const arm = raw['arm'] === undefined || raw['arm'] === '' ? 'both' : String(raw['arm']);
  if (!['left', 'right', 'both'].includes(arm)) problems.push({ code: 'labels.bad_arm', message: `arm must be left, right or both, got '${arm}'`, where });
  if (t !== undefined && end !== undefined && end < t) problems.push({ code: 'labels.bad_window', message: `end_s ${end} is before t_s ${t}`, where, hint: 'end_s >= t_s' });
  const bag = raw['bag'] === undefined || raw['bag'] === '' ? null : String(raw['bag']);
  if (problems.length > before || t === undefined) return undefined;
  return { bag, t_s: t, end_s: end ?? t, kind: kind as LabelKind, arm: arm as Label['arm'], where };
}

export function parseLabelsCsv(text: string, path: string): Labels {
  const problems: Problem[] = [];
  const lines = text.split(/\r?\n/);
  let header: string[] | null = null;
  const events: Label[] = [];
  const COLUMNS = ['bag', 't_s', 'kind', 'arm', 'end_s'];
  for (let n = 0; n < lines.length; n++) {
    const line = lines[n]!;
    if (line.trim() === '' || line.trimStart().startsWith('#')) continue;
    const cells = line.split(',').map((c) => c.trim());
    const where = { file: path, line: n + 1, column: 1 };
    if (!header) {
      header = cells;
      for (const [k, c] of cells.entries()) {
        if (!COLUMNS.includes(c)) problems.push({ code: 'labels.unknown_column', message: `unknown column '${c}'`, where: { ...where, column: 1 + cells.slice(0, k).reduce((a, x) => a + x.length + 1, 0) }, hint: `did you mean ${closest(c, COLUMNS)}? columns: ${COLUMNS.join(', ')} (t_s and kind required)` });
      }
      for (const need of ['t_s', 'kind']) if (!cells.includes(need)) problems.push({ code: 'labels.missing_column', message: `the header has no ${need} column`, where, hint: `columns: ${COLUMNS.join(', ')}` });
      if (problems.length) break;
      continue;
    }
    if (cells.length !== header.length) {
      problems.push({ code: 'labels.bad_row', message: `${cells.length} cells, the header has ${header.length}`, where });
      continue;
    }
    const raw: Record<string, unknown> = {};
    header.forEach((h, k) => (raw[h] = cells[k]));
    const e = checkEvent(raw, where, problems);
    if (e) events.push(e);
  }
  if (!header) problems.push({ code: 'labels.empty', message: 'the labels file has no header line', where: { file: path }, hint: 'bag,t_s,kind,arm,end_s' });
  if (problems.length) throw new InputError(problems);
  return { path, tolerance_s: DEFAULT_TOLERANCE_S, events };
}

export function parseLabelsYaml(text: string, path: string): Labels {
  const { doc, at } = parseYamlInput(text, path, 'labels.yaml_syntax');
  const problems: Problem[] = [];
  const root = doc.contents;
  const FORMAT = 'version: 1, tolerance_s (optional), events: a list of { t_s, kind, arm, bag, end_s }';
  if (!isMap(root)) throw new InputError({ code: 'labels.not_a_map', message: 'a labels file is a map', where: at(root), hint: FORMAT });
  let tolerance = DEFAULT_TOLERANCE_S;
  let list: Node | null = null;
  let version = false;
  for (const pair of root.items) {
    const k = isScalar(pair.key) ? String(pair.key.value) : '';
    const v = pair.value as Node | null;
    if (k === 'version') {
      version = true;
      if (!isScalar(v) || v.value !== 1) problems.push({ code: 'labels.bad_version', message: 'version must be 1', where: at(v) });
    } else if (k === 'tolerance_s') {
      const n = isScalar(v) ? Number(v.value) : Number.NaN;
      if (!(n >= 0 && n <= 60)) problems.push({ code: 'labels.bad_tolerance', message: 'tolerance_s must be a number from 0 to 60 s', where: at(v) });
      else tolerance = n;
    } else if (k === 'events') list = v;
    else problems.push({ code: 'labels.unknown_field', message: `unknown field '${k}'`, where: at(pair.key), hint: FORMAT });
  }
  if (!version) problems.push({ code: 'labels.no_version', message: 'the labels file needs version: 1', where: at(root), hint: FORMAT });
  const events: Label[] = [];
  if (!isSeq(list)) problems.push({ code: 'labels.no_events', message: 'events must be a list', where: at(list ?? root), hint: FORMAT });
  else {
    for (const item of list.items) {
      const where = at(item);
      if (!isMap(item)) {
        problems.push({ code: 'labels.bad_event', message: 'an event is a map { t_s, kind, ... }', where });
        continue;
      }
      const raw: Record<string, unknown> = {};
      for (const p of item.items) {
        const k = isScalar(p.key) ? String(p.key.value) : '';
        if (!['bag', 't_s', 'kind', 'arm', 'end_s'].includes(k)) problems.push({ code: 'labels.unknown_field', message: `unknown event field '${k}'`, where: at(p.key), hint: 'bag, t_s, kind, arm, end_s' });
        raw[k] = isScalar(p.value) ? p.value.value : p.value;
      }
      const e = checkEvent(raw, where, problems);
      if (e) events.push(e);
    }
  }
  if (problems.length) throw new InputError(problems);
  return { path, tolerance_s: tolerance, events };
}

/** The name a label's `bag` field matches: the last path component, without a trailing slash. */
export function bagName(path: string): string {
  return basename(path.replace(/\/+$/, ''));
}

/**
 * Assign labels to bags and check them against each bag's time span (before any work).
 * Returns the labels of each bag, in bag order.
 */
export function labelsPerBag(labels: Labels, bags: readonly { path: string; duration_s: number }[]): Label[][] {
  const problems: Problem[] = [];
  const out: Label[][] = bags.map(() => []);
  const names = bags.map((b) => bagName(b.path));
  for (const e of labels.events) {
    let k: number;
    if (e.bag === null) {
      if (bags.length !== 1) {
        problems.push({ code: 'labels.which_bag', message: `the sweep reads ${bags.length} bags and this event names none`, where: e.where, hint: `add a bag column or field: one of ${names.join(', ')}` });
        continue;
      }
      k = 0;
    } else {
      k = names.indexOf(e.bag);
      if (k < 0) {
        problems.push({ code: 'labels.unknown_bag', message: `no bag named '${e.bag}' among the bags of the sweep`, where: e.where, hint: `did you mean ${closest(e.bag, names)}? bags: ${names.join(', ')}` });
        continue;
      }
    }
    const d = bags[k]!.duration_s;
    if (e.t_s > d || e.end_s > d) {
      problems.push({ code: 'labels.outside_bag', message: `event at ${e.t_s} s${e.end_s !== e.t_s ? ` to ${e.end_s} s` : ''} lies outside bag ${names[k]} (0 to ${d.toFixed(3)} s)`, where: e.where, hint: `times are seconds from the bag start, from 0 to ${d.toFixed(3)}` });
      continue;
    }
    out[k]!.push(e);
  }
  if (problems.length) throw new InputError(problems);
  for (const l of out) l.sort((a, b) => a.t_s - b.t_s);
  return out;
}
