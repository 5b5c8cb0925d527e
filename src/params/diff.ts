/** Which parameters a run used that differ from the built-in defaults (for summaries and reports). */
import type { ArmName, ResolvedValue } from './spec.js';

export interface ChangedParam {
  readonly key: string;
  readonly value: unknown;
  /** The built-in default, or null where the key has none (e.g. a zone's own keys). */
  readonly default: unknown;
  /** file:line:col it came from. */
  readonly from: string;
}

function defaultOf(v: ResolvedValue, arm: ArmName): unknown {
  if (v.spec.armDefault) return v.spec.armDefault[arm];
  return v.spec.default ?? null;
}

/** Values taken from a file that differ from their default, in key order. */
export function changedParams(values: ReadonlyMap<string, ResolvedValue>, arm: ArmName): ChangedParam[] {
  const out: ChangedParam[] = [];
  for (const v of values.values()) {
    if (v.source.kind !== 'file') continue;
    const d = defaultOf(v, arm);
    if (JSON.stringify(d) === JSON.stringify(v.value)) continue;
    out.push({ key: v.key, value: v.value, default: d, from: `${v.source.file}:${v.source.line ?? '?'}:${v.source.column ?? '?'}` });
  }
  return out.sort((a, b) => (a.key < b.key ? -1 : a.key > b.key ? 1 : 0));
}

/** One line per arm for a report: `left: 12 changed (wrench_filter.cutoff_hz = 5, ...)`. */
export function changedParamsText(changed: readonly ChangedParam[], max = 12): string {
  if (changed.length === 0) return 'none: built-in defaults';
  const shown = changed.slice(0, max).map((c) => `${c.key} = ${JSON.stringify(c.value)}`);
  return `${changed.length} differ from the built-in defaults: ${shown.join(', ')}${changed.length > max ? `, and ${changed.length - max} more (summary.json lists all)` : ''}`;
}
