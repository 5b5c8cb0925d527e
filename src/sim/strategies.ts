/**
 * Team strategies, each a transformation of the two arms' ArmConfig plus how the simulated
 * cell feeds each arm's zone view:
 *
 *   centralized  every zone observed_by both; each arm's view shows every zone (an oracle).
 *   explicit     every zone observed_by both, but an arm learns the partner's zones only from
 *                messages sent every k steps (with latency); UNKNOWN until the first arrives.
 *   alternating  roles.scheduler alternating with period k * dt; phases 0 (left) and 1 (right).
 *   fixed        left a fixed speaker, right a fixed listener.
 *   independent  both fixed speakers with legibility_gain 0: each acts on its own view only.
 *   adaptive     roles.scheduler adaptive (clock slots shared out by each arm's count of private zones);
 *                adaptive:k sets the slot to k samples (default: roles.period_s).
 *   lookahead    roles.scheduler lookahead: the owner of the next private zone along the path
 *                speaks, from a progress estimate both arms compute from the clock and the task;
 *                lookahead:k sets the slot of its alternation once no private zone is ahead.
 *
 * Everything but `centralized` and `explicit` feeds each arm only its own area sensor.
 */
import type { ArmConfig, ZoneConfig } from '../params/config.js';
import { InputError } from '../util/errors.js';

export const STRATEGY_NAMES = ['centralized', 'explicit', 'alternating', 'fixed', 'independent', 'adaptive', 'lookahead'] as const;
export type StrategyName = (typeof STRATEGY_NAMES)[number];

/** Strategies that take a period in steps (k). */
export const PERIODIC: ReadonlySet<StrategyName> = new Set(['explicit', 'alternating']);
/** Default k when a periodic strategy is named without one. */
export const DEFAULT_PERIOD_STEPS = 500;
/** The alternating periods of the default comparison. */
export const DEFAULT_ALTERNATING_STEPS = [50, 200, 500, 1000] as const;
export const MAX_PERIOD_STEPS = 600_000;

export interface StrategySpec {
  readonly name: StrategyName;
  /** Period in wrench samples (alternating: role slot; explicit: message period); null otherwise. */
  readonly k: number | null;
}

/** Strategies that may take a period but need none (adaptive: the slot length, default roles.period_s). */
export const OPTIONAL_PERIOD: ReadonlySet<StrategyName> = new Set(['adaptive', 'lookahead']);

/** How the sim builds each arm's zone view. */
export type ZoneViewMode = 'own' | 'all' | 'messages';

export interface AppliedStrategy {
  readonly spec: StrategySpec;
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly view: ZoneViewMode;
  /** Explicit: message period in samples. */
  readonly messageEvery: number;
}

/** Seconds as a user writes them: 0.5, 0.05, 1 (no trailing zeros). */
export function secondsText(v: number): string {
  return String(Number(v.toPrecision(6)));
}

/**
 * The strategy as users read and write it: the period in seconds (`alternating:0.5s`), at the
 * wrench sample rate `rateHz` (every shipped cell: 1000 Hz).
 */
export function strategyLabel(s: StrategySpec, rateHz = 1000): string {
  return s.k === null ? s.name : `${s.name}:${secondsText(s.k / rateHz)}s`;
}

function allShared(zones: readonly ZoneConfig[]): ZoneConfig[] {
  return zones.map((z) => ({ ...z, observed_by: 'both' as const }));
}

function withRoles(c: ArmConfig, roles: Partial<ArmConfig['roles']>): ArmConfig {
  return { ...c, roles: { ...c.roles, ...roles } };
}

/** Apply a strategy to the arms' configurations (which stay untouched). */
export function applyStrategy(spec: StrategySpec, left: ArmConfig, right: ArmConfig): AppliedStrategy {
  const rate = left.wrench_filter.sample_rate_hz;
  const k = spec.k ?? DEFAULT_PERIOD_STEPS;
  switch (spec.name) {
    case 'centralized':
    case 'explicit': {
      const share = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: allShared(c.task.zones) } });
      return { spec, left: share(left), right: share(right), view: spec.name === 'centralized' ? 'all' : 'messages', messageEvery: k };
    }
    case 'alternating':
      return {
        spec,
        left: withRoles(left, { scheduler: 'alternating', period_s: k / rate, phase: 0 }),
        right: withRoles(right, { scheduler: 'alternating', period_s: k / rate, phase: 1 }),
        view: 'own',
        messageEvery: 0,
      };
    case 'fixed':
      return {
        spec,
        left: withRoles(left, { scheduler: 'fixed', fixed_role: 'speaker' }),
        right: withRoles(right, { scheduler: 'fixed', fixed_role: 'listener' }),
        view: 'own',
        messageEvery: 0,
      };
    case 'independent': {
      const solo = (c: ArmConfig): ArmConfig => ({ ...withRoles(c, { scheduler: 'fixed', fixed_role: 'speaker' }), policy: { ...c.policy, legibility_gain: 0 } });
      return { spec, left: solo(left), right: solo(right), view: 'own', messageEvery: 0 };
    }
    case 'adaptive':
    case 'lookahead':
      return {
        spec,
        left: withRoles(left, { scheduler: spec.name, phase: 0, ...(spec.k !== null ? { period_s: spec.k / rate } : {}) }),
        right: withRoles(right, { scheduler: spec.name, phase: 1, ...(spec.k !== null ? { period_s: spec.k / rate } : {}) }),
        view: 'own',
        messageEvery: 0,
      };
  }
}

/**
 * Parse `name` or `name:k` (comma-separated lists go through `parseStrategyList`). Unknown
 * names and bad periods are refused with the option and the allowed values.
 */
export function parseStrategy(raw: string, option = '--strategy', defaultK = DEFAULT_PERIOD_STEPS, rateHz = 1000): StrategySpec {
  const [name, kRaw, ...rest] = raw.trim().split(':');
  if (!(STRATEGY_NAMES as readonly string[]).includes(name ?? '') || rest.length > 0) {
    throw new InputError({ code: 'cli.unknown_strategy', message: `unknown strategy '${raw}'`, where: { option }, hint: `one of ${STRATEGY_NAMES.join(', ')} (${[...PERIODIC, ...OPTIONAL_PERIOD].join(', ')} take a period: name:0.5s in seconds, or name:500 in wrench samples)` });
  }
  const n = name as StrategyName;
  if (!PERIODIC.has(n) && !(OPTIONAL_PERIOD.has(n) && kRaw !== undefined)) {
    if (kRaw !== undefined) throw new InputError({ code: 'cli.period_not_allowed', message: `strategy '${n}' takes no period, got '${raw}'`, where: { option }, hint: `only ${[...PERIODIC, ...OPTIONAL_PERIOD].join(', ')} take a period` });
    return { name: n, k: null };
  }
  let k: number;
  if (kRaw === undefined) k = defaultK;
  else if (/s$/.test(kRaw.trim())) {
    // Seconds, the unit users read everywhere: a whole number of wrench samples at rateHz.
    const sec = Number(kRaw.trim().slice(0, -1));
    const steps = sec * rateHz;
    k = Math.round(steps);
    if (!Number.isFinite(sec) || kRaw.trim().length < 2 || Math.abs(steps - k) > 1e-6 * Math.max(1, steps)) {
      throw new InputError({ code: 'cli.bad_period', message: `the period of '${raw}' must be a whole number of wrench samples at ${rateHz} Hz`, where: { option }, hint: `seconds from ${secondsText(1 / rateHz)} to ${secondsText(MAX_PERIOD_STEPS / rateHz)}, e.g. ${n}:0.5s` });
    }
  } else k = Number(kRaw);
  if (!Number.isInteger(k) || k < 1 || k > MAX_PERIOD_STEPS) {
    throw new InputError({ code: 'cli.bad_period', message: `the period of '${raw}' must be seconds (e.g. ${n}:0.5s) or a whole number of wrench samples`, where: { option }, hint: `from ${secondsText(1 / rateHz)} s to ${secondsText(MAX_PERIOD_STEPS / rateHz)} s (1 to ${MAX_PERIOD_STEPS} samples)` });
  }
  return { name: n, k };
}

/** The default comparison: every strategy, alternating at several periods. */
export function defaultStrategies(): StrategySpec[] {
  return [
    { name: 'centralized', k: null },
    { name: 'explicit', k: DEFAULT_PERIOD_STEPS },
    ...DEFAULT_ALTERNATING_STEPS.map((k) => ({ name: 'alternating' as const, k })),
    { name: 'adaptive', k: null },
    { name: 'lookahead', k: null },
    { name: 'fixed', k: null },
    { name: 'independent', k: null },
  ];
}

export function parseStrategyList(raw: string | undefined, option = '--strategies'): StrategySpec[] {
  if (raw === undefined) return defaultStrategies();
  const parts = raw.split(',').map((s) => s.trim()).filter((s) => s.length > 0);
  if (parts.length === 0) throw new InputError({ code: 'cli.no_strategies', message: `${option} lists no strategy`, where: { option }, hint: STRATEGY_NAMES.join(', ') });
  const out: StrategySpec[] = [];
  for (const p of parts) {
    const [name] = p.split(':');
    if (name === 'alternating' && !p.includes(':')) out.push(...DEFAULT_ALTERNATING_STEPS.map((k) => ({ name: 'alternating' as const, k })));
    else out.push(parseStrategy(p, option));
  }
  const seen = new Set<string>();
  return out.filter((s) => {
    const l = strategyLabel(s);
    if (seen.has(l)) return false;
    seen.add(l);
    return true;
  });
}
