/**
 * Offline checks over a replay: an expectations file (YAML, a format of our own) and its
 * evaluation. Format:
 *
 *   version: 1
 *   expect:
 *     - no_hold: { arm: both }
 *     - hold: { arm: left, reason: impact, between_s: [5.0, 6.5] }
 *     - peak_internal_force_below_n: { value: 40.0 }
 *     - peak_correction_force_below_n: { arm: both, value: 50.0 }
 *     - belief_above: { arm: right, zone: clamp_post, occupied: true, value: 0.9, by_s: 5.0, until_s: 8.0 }
 *     - role_switches: { arm: left, period_s: 0.5, tolerance_s: 0.005 }
 *
 * Every entry holds one kind and may carry `name:`. Times are seconds from the bag start.
 * The structure is checked with JSON Schema (ajv); every problem names file, line and column.
 * Checked at load too, before any replay work: windows in order (`between_s` [a, b] with a ≤ b;
 * `from_s` ≤ `by_s` ≤ `until_s`; `tolerance_s` below half of `period_s`) and, given what is
 * replayed, the names: arms that are replayed, zones the arm infers (partner-only zones).
 * Anchors and aliases work; their expansion is bounded (src/util/yaml.ts).
 */
import { Ajv, type ErrorObject } from 'ajv';
import { closest } from 'fastest-levenshtein';
import { isMap, isSeq, LineCounter, type Document, type Node } from 'yaml';
import { CHECKS } from '../core/watchdog.js';
import { InputError, type Problem } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { parseYamlDocument, yamlToJs } from '../util/yaml.js';
import type { ArmReplayRecord, ReplayRecord } from './replay.js';

const arm = { enum: ['left', 'right', 'both'] } as const;
const num = { type: 'number' } as const;
const KIND_SCHEMAS = {
  no_hold: { type: 'object', properties: { arm }, required: ['arm'], additionalProperties: false },
  hold: {
    type: 'object',
    properties: { arm, reason: { enum: [...CHECKS] }, between_s: { type: 'array', items: num, minItems: 2, maxItems: 2 } },
    required: ['arm'],
    additionalProperties: false,
  },
  peak_internal_force_below_n: { type: 'object', properties: { value: { type: 'number', exclusiveMinimum: 0 } }, required: ['value'], additionalProperties: false },
  peak_correction_force_below_n: { type: 'object', properties: { arm, value: { type: 'number', exclusiveMinimum: 0 } }, required: ['arm', 'value'], additionalProperties: false },
  belief_above: {
    type: 'object',
    properties: {
      arm: { enum: ['left', 'right'] },
      zone: { type: 'string', minLength: 1 },
      occupied: { type: 'boolean' },
      value: { type: 'number', minimum: 0, maximum: 1 },
      from_s: { type: 'number', minimum: 0 },
      by_s: { type: 'number', minimum: 0 },
      until_s: { type: 'number', minimum: 0 },
    },
    required: ['arm', 'zone', 'value', 'by_s'],
    additionalProperties: false,
  },
  role_switches: {
    type: 'object',
    properties: { arm, period_s: { type: 'number', exclusiveMinimum: 0 }, tolerance_s: { type: 'number', minimum: 0 } },
    required: ['arm', 'period_s'],
    additionalProperties: false,
  },
} as const;
export type ExpectationKind = keyof typeof KIND_SCHEMAS;
const KINDS = Object.keys(KIND_SCHEMAS) as ExpectationKind[];

const FILE_SCHEMA = {
  type: 'object',
  properties: { version: { const: 1 }, expect: { type: 'array', minItems: 1, items: { type: 'object' } } },
  required: ['version', 'expect'],
  additionalProperties: false,
} as const;

export interface Expectation {
  readonly name: string;
  readonly kind: ExpectationKind;
  readonly args: Record<string, unknown>;
  readonly file?: string;
  readonly line?: number;
  readonly column?: number;
}

/** What a replay will have, so names in expectations are checked at load. */
export interface ExpectationContext {
  /** The arms replayed. */
  readonly arms: readonly ('left' | 'right')[];
  /** Per arm, the zones it infers (seen only by its partner), in belief order. */
  readonly hiddenZones: { readonly left: readonly string[]; readonly right: readonly string[] };
}

interface CellZones {
  readonly config: { readonly task: { readonly zones: readonly { readonly name: string; readonly observed_by: string }[] } };
}

/** The zones each arm of a cell infers: those observed by its partner only (src/params/config.ts). */
export function hiddenZonesOf(cell: { readonly left: CellZones; readonly right: CellZones }): ExpectationContext['hiddenZones'] {
  const of = (arm: 'left' | 'right'): string[] => cell[arm].config.task.zones.filter((z) => z.observed_by !== 'both' && z.observed_by !== arm).map((z) => z.name);
  return { left: of('left'), right: of('right') };
}

export interface Verdict {
  readonly name: string;
  readonly kind: ExpectationKind;
  readonly expected: string;
  readonly measured: string;
  readonly pass: boolean;
  readonly value: number | null;
}

const ajv = new Ajv({ allErrors: true, strict: true });
const validateFile = ajv.compile(FILE_SCHEMA);
const validators = Object.fromEntries(KINDS.map((k) => [k, ajv.compile(KIND_SCHEMAS[k])])) as Record<ExpectationKind, ReturnType<typeof ajv.compile>>;

function position(doc: Document, lc: LineCounter, path: (string | number)[], file: string): { file: string; line?: number; column?: number } {
  let node: unknown = doc.getIn(path, true);
  for (let cut = path.length; (node === undefined || node === null) && cut > 0; cut--) node = doc.getIn(path.slice(0, cut - 1), true);
  const range = (node as { range?: [number, number, number] } | undefined)?.range;
  if (!range) return { file };
  const p = lc.linePos(range[0]);
  return { file, line: p.line, column: p.col };
}

/** Position of a map key (the key itself, not its value). */
function keyPosition(doc: Document, lc: LineCounter, path: (string | number)[], file: string): { file: string; line?: number; column?: number } {
  const parent = doc.getIn(path.slice(0, -1), true);
  const last = path[path.length - 1];
  if (isMap(parent)) {
    const pair = parent.items.find((p) => (p.key as { value?: unknown } | null)?.value === last);
    const range = (pair?.key as { range?: [number, number, number] } | undefined)?.range;
    if (range) {
      const p = lc.linePos(range[0]);
      return { file, line: p.line, column: p.col };
    }
  }
  return position(doc, lc, path, file);
}

function ajvProblems(errors: ErrorObject[] | null | undefined, base: (string | number)[], doc: Document, lc: LineCounter, file: string, label: string): Problem[] {
  return (errors ?? []).map((e) => {
    const sub = e.instancePath.split('/').filter(Boolean).map((s) => (/^\d+$/.test(s) ? Number(s) : s));
    const extra = e.keyword === 'additionalProperties' ? String((e.params as { additionalProperty: string }).additionalProperty) : undefined;
    const where = extra ? keyPosition(doc, lc, [...base, ...sub, extra], file) : position(doc, lc, [...base, ...sub], file);
    const at = [label, ...sub].join('.');
    let message = `${at} ${e.message ?? 'is not allowed'}`;
    if (extra) message = `${at}: unknown key '${extra}'`;
    if (e.keyword === 'enum') message += `: ${(e.params as { allowedValues: unknown[] }).allowedValues.join(', ')}`;
    return { code: 'expect.schema', message, where };
  });
}

export function loadExpectations(path: string, context?: ExpectationContext): Expectation[] {
  const text = readInputText(path, { what: 'expectations file', code: 'expect', maxBytes: INPUT_LIMITS.expectations, option: '--expect' });
  return parseExpectations(text, path, context);
}

export function parseExpectations(text: string, file: string, context?: ExpectationContext): Expectation[] {
  const lc = new LineCounter();
  const doc = parseYamlDocument(text, { lineCounter: lc, uniqueKeys: true });
  if (doc.errors.length) {
    throw new InputError(doc.errors.map((e) => {
      const p = lc.linePos(e.pos[0]);
      return { code: 'expect.yaml_syntax', message: `YAML syntax: ${e.message.split('\n')[0]}`, where: { file, line: p.line, column: p.col } };
    }));
  }
  const js = yamlToJs(doc);
  if (!js.ok) throw new InputError({ code: 'expect.yaml_aliases', message: js.message, where: { file }, hint: 'write the values out, or reuse anchors fewer times' });
  const data = js.value;
  if (!validateFile(data)) throw new InputError(ajvProblems(validateFile.errors, [], doc, lc, file, 'expectations'));
  const list = (data as { expect: Record<string, unknown>[] }).expect;
  const problems: Problem[] = [];
  const out: Expectation[] = [];
  list.forEach((item, k) => {
    const keys = Object.keys(item).filter((x) => x !== 'name');
    const where = position(doc, lc, ['expect', k], file);
    if (keys.length !== 1) {
      problems.push({ code: 'expect.one_kind', message: `expect[${k}] must hold exactly one kind, found ${keys.length ? keys.join(', ') : 'none'}`, where, hint: `kinds: ${KINDS.join(', ')}` });
      return;
    }
    const kind = keys[0]!;
    if (!(KINDS as string[]).includes(kind)) {
      problems.push({ code: 'expect.unknown_kind', message: `expect[${k}]: unknown kind '${kind}'`, where: keyPosition(doc, lc, ['expect', k, kind], file), hint: `did you mean ${closest(kind, KINDS)}? kinds: ${KINDS.join(', ')}` });
      return;
    }
    const args = item[kind] as Record<string, unknown>;
    const v = validators[kind as ExpectationKind];
    if (!v(args)) {
      problems.push(...ajvProblems(v.errors, ['expect', k, kind], doc, lc, file, `expect[${k}].${kind}`));
      return;
    }
    const at = (key: string) => position(doc, lc, ['expect', k, kind, key], file);
    const before = problems.length;
    const b = (args as { between_s?: [number, number] }).between_s;
    if (b && b[1] < b[0]) problems.push({ code: 'expect.bad_window', message: `expect[${k}].hold.between_s ends before it starts`, where: at('between_s') });
    const a = args as { from_s?: number; by_s?: number; until_s?: number; period_s?: number; tolerance_s?: number; arm?: string; zone?: string };
    if (kind === 'belief_above') {
      if (a.from_s !== undefined && a.by_s !== undefined && a.from_s > a.by_s)
        problems.push({ code: 'expect.bad_window', message: `expect[${k}].belief_above: from_s ${a.from_s} s is after by_s ${a.by_s} s`, where: at('from_s'), hint: 'from_s <= by_s <= until_s' });
      if (a.until_s !== undefined && a.by_s !== undefined && a.until_s < a.by_s)
        problems.push({ code: 'expect.bad_window', message: `expect[${k}].belief_above: until_s ${a.until_s} s is before by_s ${a.by_s} s`, where: at('until_s'), hint: 'from_s <= by_s <= until_s' });
    }
    if (kind === 'role_switches' && a.tolerance_s !== undefined && a.period_s !== undefined && a.tolerance_s >= a.period_s / 2)
      problems.push({ code: 'expect.bad_window', message: `expect[${k}].role_switches: tolerance_s ${a.tolerance_s} s is not below half of period_s (${a.period_s / 2} s), so any time would pass`, where: at('tolerance_s'), hint: `below ${a.period_s / 2} s` });
    if (context && a.arm !== undefined) {
      const need = a.arm === 'both' ? (['left', 'right'] as const) : [a.arm as 'left' | 'right'];
      const missing = need.filter((x) => !context.arms.includes(x));
      if (missing.length)
        problems.push({ code: 'expect.arm_not_replayed', message: `expect[${k}].${kind} needs the ${missing.join(' and ')} arm${missing.length > 1 ? 's' : ''}, which ${missing.length > 1 ? 'are' : 'is'} not replayed`, where: at('arm'), hint: 'replay with --arm both (or the arm named)' });
      else if (kind === 'belief_above' && a.zone !== undefined) {
        const zones = context.hiddenZones[a.arm as 'left' | 'right'];
        if (!zones.includes(a.zone))
          problems.push({
            code: 'expect.unknown_zone',
            message: `expect[${k}].belief_above: '${a.zone}' is not a zone the ${a.arm} arm infers`,
            where: at('zone'),
            hint: zones.length ? `the ${a.arm} arm infers ${zones.join(', ')}; did you mean ${closest(a.zone, [...zones])}?` : `the ${a.arm} arm infers no zone (it sees every zone itself)`,
          });
      }
    }
    if (kind === 'peak_internal_force_below_n' && context && context.arms.length < 2)
      problems.push({ code: 'expect.arm_not_replayed', message: `expect[${k}].peak_internal_force_below_n needs both arms, which are not replayed`, where, hint: 'replay with --arm both' });
    if (problems.length > before) return;
    const name = typeof item['name'] === 'string' ? (item['name'] as string) : `${kind} ${JSON.stringify(args)}`;
    out.push({ name, kind: kind as ExpectationKind, args, file, ...(where.line !== undefined ? { line: where.line } : {}), ...(where.column !== undefined ? { column: where.column } : {}) });
  });
  if (problems.length) throw new InputError(problems);
  return out;
}

function armsOf(record: ReplayRecord, which: unknown, e: Expectation): readonly ArmReplayRecord[] {
  const arms = which === 'both' ? record.arms : record.arms.filter((a) => a.arm === which);
  if (arms.length === 0 || (which === 'both' && record.arms.length < 2)) {
    throw new InputError({ code: 'expect.arm_not_replayed', message: `expectation '${e.name}' needs ${which === 'both' ? 'both arms' : `the ${String(which)} arm`}, which ${which === 'both' ? 'were' : 'was'} not replayed`, hint: 'replay with --arm both (or the arm named)' });
  }
  return arms;
}

const f3 = (v: number) => (Number.isFinite(v) ? v.toFixed(3) : String(v));
/** Forces in texts: 0.01 N, as everywhere else. */
const f2 = (v: number) => (Number.isFinite(v) ? v.toFixed(2) : String(v));
/** A small time offset, s: 0, or three significant digits. */
const fs = (v: number) => (v === 0 ? '0' : v < 1e-3 ? v.toExponential(2) : v.toPrecision(3));

/** Evaluate every expectation against a replay record. Throws InputError for checks that cannot apply. */
export function evaluate(record: ReplayRecord, list: readonly Expectation[]): Verdict[] {
  return list.map((e): Verdict => {
    const a = e.args as Record<string, any>;
    const base = { name: e.name, kind: e.kind };
    switch (e.kind) {
      case 'no_hold': {
        const holds = armsOf(record, a.arm, e).flatMap((r) => r.events.filter((v) => v.kind === 'hold').map((v) => ({ arm: r.arm, t: v.t_s, why: r.events.find((x) => x.kind === 'trip' && x.t_s === v.t_s)?.check ?? '?' })));
        return { ...base, expected: 'no safe hold', measured: holds.length ? holds.map((h) => `${h.arm} held at ${f3(h.t)} s (${h.why})`).join('; ') : 'no hold', pass: holds.length === 0, value: holds.length };
      }
      case 'hold': {
        const [lo, hi] = (a.between_s as [number, number] | undefined) ?? [Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY];
        const trips = armsOf(record, a.arm, e).flatMap((r) => r.events.filter((v) => v.kind === 'trip' && (a.reason === undefined || v.check === a.reason)).map((v) => ({ arm: r.arm, t: v.t_s, check: v.check })));
        const inside = trips.find((x) => x.t >= lo && x.t <= hi);
        const want = `a hold${a.reason ? ` for ${a.reason}` : ''}${a.between_s ? ` between ${lo} and ${hi} s` : ''}`;
        return { ...base, expected: want, measured: trips.length ? trips.slice(0, 5).map((x) => `${x.arm} ${x.check} at ${f3(x.t)} s`).join('; ') : 'no such trip', pass: inside !== undefined, value: inside ? inside.t : null };
      }
      case 'peak_internal_force_below_n': {
        if (!record.internalForce) throw new InputError({ code: 'expect.arm_not_replayed', message: `expectation '${e.name}' needs both arms`, hint: 'replay with --arm both' });
        let peak = 0;
        for (const v of record.internalForce.y) peak = Math.max(peak, Math.abs(v));
        return { ...base, expected: `< ${a.value} N`, measured: `${f2(peak)} N`, pass: peak < a.value, value: peak };
      }
      case 'peak_correction_force_below_n': {
        let peak = 0;
        for (const r of armsOf(record, a.arm, e)) for (const v of r.correctionForce.subarray(r.taredFrom)) peak = Math.max(peak, v);
        return { ...base, expected: `< ${a.value} N`, measured: `${f2(peak)} N`, pass: peak < a.value, value: peak };
      }
      case 'belief_above': {
        const r = armsOf(record, a.arm, e)[0]!;
        const z = r.hiddenZones.indexOf(a.zone);
        if (z < 0) throw new InputError({ code: 'expect.unknown_zone', message: `expectation '${e.name}': '${a.zone}' is not a zone the ${r.arm} arm infers`, where: { ...(e.file !== undefined ? { file: e.file } : {}), ...(e.line !== undefined ? { line: e.line } : {}), ...(e.column !== undefined ? { column: e.column } : {}) }, hint: `the ${r.arm} arm's hidden zones: ${r.hiddenZones.join(', ') || 'none'}` });
        const occupied = a.occupied !== false;
        const w = r.hiddenZones.length;
        const from = (a.from_s as number | undefined) ?? 0;
        // Reached: the first update in [from_s, by_s] at or above the value.
        let reached = -1;
        let best = 0;
        for (let i = 0; i < r.beliefT.length && r.beliefT[i]! <= a.by_s; i++) {
          if (r.beliefT[i]! < from) continue;
          const p = occupied ? r.beliefMarginals[i * w + z]! : 1 - r.beliefMarginals[i * w + z]!;
          best = Math.max(best, p);
          if (p >= a.value) {
            reached = i;
            break;
          }
        }
        // Kept: with until_s, never below the value from then until until_s.
        let kept = true;
        let low = Number.POSITIVE_INFINITY;
        if (reached >= 0 && a.until_s !== undefined) {
          for (let i = reached; i < r.beliefT.length && r.beliefT[i]! <= a.until_s; i++) {
            const p = occupied ? r.beliefMarginals[i * w + z]! : 1 - r.beliefMarginals[i * w + z]!;
            low = Math.min(low, p);
          }
          kept = low >= a.value;
        }
        const label = `P(${a.zone} ${occupied ? 'occupied' : 'free'})`;
        const expected = `${label} >= ${a.value} by ${a.by_s} s${a.until_s !== undefined ? ` and until ${a.until_s} s` : ''}`;
        const measured = reached < 0 ? `at most ${f3(best)} by ${a.by_s} s` : `reached at ${f3(r.beliefT[reached]!)} s${a.until_s !== undefined ? `, lowest after ${f3(low)}` : ''}`;
        return { ...base, expected, measured, pass: reached >= 0 && kept, value: reached >= 0 ? r.beliefT[reached]! : null };
      }
      case 'role_switches': {
        const tol = (a.tolerance_s as number | undefined) ?? 0.005;
        const t0 = Number(record.startNs) / 1e9;
        let worst = 0;
        let count = 0;
        for (const r of armsOf(record, a.arm, e)) {
          for (const v of r.events) {
            if (v.kind !== 'role') continue;
            count++;
            const abs = t0 + v.t_s;
            const k = Math.round(abs / a.period_s);
            worst = Math.max(worst, Math.abs(abs - k * a.period_s));
          }
        }
        return { ...base, expected: `switches on multiples of ${a.period_s} s within ${tol} s`, measured: count ? `${count} switches, worst ${fs(worst)} s off` : 'no switch', pass: count > 0 && worst <= tol, value: count ? worst : null };
      }
    }
  });
}
