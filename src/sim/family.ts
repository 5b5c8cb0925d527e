/**
 * Scenario families: a YAML file of our own (versioned) describing the distributions from which
 * `--seed` draws worlds of the simulated cell. Everything is optional; what a family leaves out
 * comes from the parameters file (the task) or the simulation defaults (src/sim/options.ts).
 *
 *   version: 1
 *   family: cluttered                 # a name (letters, digits, _ and -)
 *   description: free text
 *   redraws: 50                       # a drawn world that fails the task checks is redrawn, at most this often
 *   zones:                            # absent: the parameters file's zones
 *     count: [4, 8]                   # whole numbers, drawn uniformly (at most 8)
 *     shapes: [box, circle]           # drawn uniformly
 *     kinds: [clamp_post, cable_tray] # drawn uniformly (cable_tray hangs from the ceiling)
 *     box_size_m: [0.1, 0.3]          # each side of a box
 *     circle_radius_m: [0.05, 0.12]
 *     center_x_m: [0.3, 1.3]
 *     center_y_m: [-0.7, 0.7]
 *     observed_by: { left: 0.4, right: 0.4, both: 0.2 }   # weights
 *     min_gap_m: 0.1                  # between any two zones
 *   occupancy:
 *     probability: 0.5                # each zone at the start
 *     change_probability: 0.3         # each zone changes state once during the transfer
 *     change_time_s: [2, 10]
 *   area_sensor: { miss_rate: 0.05, false_alarm_rate: 0.02, latency_s: [0, 0.2] }
 *   object: { length_m: [1.0, 1.4], mass_kg: [2, 4], grasp_offset_m: [0.45, 0.5] }
 *   wrist_sensor: { noise_force_n: 0.3, noise_torque_nm: 0.02, bias_force_n: 3, bias_torque_nm: 0.2, drift_force_n_s: 0.03, drift_torque_nm_s: 0.001,
 *                   disturbance_n: [0.5, 1.5] }   # the correction-band disturbance of src/sim/options.ts
 *   coupling: { damping_n_s_m: [70, 90], grasp_timeconst_s: [0.004, 0.008] }
 *   knocks: { count: [0, 2], time_s: [2, 12], force_n: [10, 30], duration_s: [0.02, 0.05], vertical: false }
 *
 * A range is a number (fixed) or [lo, hi] (uniform). Each world is drawn from its seed: the
 * family's own stream first (zones, object, sensors, coupling), then the cell's usual world draw
 * (`sampleWorld`: occupancy, start/goal jitter, wrist sensor bias, drift and noise seed) with the
 * family's occupancy probability and wrist sensor, then changes, knocks and area-sensor rates. A
 * family that only restates the defaults draws exactly the worlds of a run without a family.
 *
 * A drawn world must pass the task checks a parameters file passes (the task keys' cross-checks of
 * src/params/config.ts, restated here for a drawn task: grasp on the object, at most
 * `belief.max_hidden_zones` partner-only zones, no zone over the object at start or goal) and the
 * checks against the cell (src/sim/world.ts), plus two of its own: zones keep `min_gap_m` apart,
 * and the centralized velocity field (every zone that is ever occupied known to both) carries
 * the object to the goal without touching a zone. A world that fails is redrawn from a derived
 * seed; the redraws are counted. At load, a family from which no world can be drawn is refused.
 */
import { Ajv, type ErrorObject } from 'ajv';
import { isMap, LineCounter, type Document } from 'yaml';
import { TaskModel, SubsetTable } from '../core/task-model.js';
import type { ArmConfig, Observer, TaskParams, ZoneConfig, ZoneShape } from '../params/config.js';
import { segmentHitsZone } from '../params/config.js';
import { InputError, type Problem } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { Rng } from '../util/rng.js';
import { parseYamlDocument, yamlToJs } from '../util/yaml.js';
import { simOptions, type SimOptions, type SimOptionsOverrides } from './options.js';
import { checkTaskForCell, sampleWorld, worldSeed, type AreaSensorDraw, type Knock, type World, type ZoneChange } from './world.js';

export const FAMILY_VERSION = 1;
/** Most zones a family may draw (the contact bitmask and the belief's 2^8 hypotheses). */
export const FAMILY_MAX_ZONES = 8;
export const DEFAULT_REDRAWS = 50;

export type Range = number | readonly [number, number];

export interface FamilySpec {
  readonly version: 1;
  readonly family: string;
  readonly description?: string;
  readonly redraws?: number;
  readonly zones?: {
    readonly count: Range;
    readonly shapes?: readonly ZoneShape[];
    readonly kinds?: readonly string[];
    readonly box_size_m?: Range;
    readonly circle_radius_m?: Range;
    readonly center_x_m: Range;
    readonly center_y_m: Range;
    readonly observed_by?: Partial<Record<Observer, number>>;
    readonly min_gap_m?: number;
  };
  readonly occupancy?: { readonly probability?: Range; readonly change_probability?: Range; readonly change_time_s?: Range };
  readonly area_sensor?: { readonly miss_rate?: Range; readonly false_alarm_rate?: Range; readonly latency_s?: Range };
  readonly object?: { readonly length_m?: Range; readonly mass_kg?: Range; readonly grasp_offset_m?: Range };
  readonly wrist_sensor?: Partial<Record<'noise_force_n' | 'noise_torque_nm' | 'bias_force_n' | 'bias_torque_nm' | 'drift_force_n_s' | 'drift_torque_nm_s' | 'disturbance_n', Range>>;
  readonly coupling?: { readonly damping_n_s_m?: Range; readonly grasp_timeconst_s?: Range };
  readonly knocks?: { readonly count: Range; readonly time_s: Range; readonly force_n: Range; readonly duration_s?: Range; readonly vertical?: boolean };
}

/** A loaded family: the spec and where it came from. */
export interface Family {
  readonly spec: FamilySpec;
  readonly file: string;
}

const range = { anyOf: [{ type: 'number' }, { type: 'array', items: { type: 'number' }, minItems: 2, maxItems: 2 }] } as const;
const obj = (properties: Record<string, unknown>, required: string[] = []) => ({ type: 'object', properties, required, additionalProperties: false });
const FAMILY_SCHEMA = obj(
  {
    version: { const: FAMILY_VERSION },
    family: { type: 'string', pattern: '^[A-Za-z0-9_-]{1,64}$' },
    description: { type: 'string' },
    redraws: { type: 'integer', minimum: 0, maximum: 10000 },
    zones: obj(
      {
        count: range,
        shapes: { type: 'array', minItems: 1, items: { enum: ['box', 'circle'] } },
        kinds: { type: 'array', minItems: 1, items: { enum: ['clamp_post', 'cable_tray', 'generic'] } },
        box_size_m: range,
        circle_radius_m: range,
        center_x_m: range,
        center_y_m: range,
        observed_by: obj({ left: { type: 'number', minimum: 0 }, right: { type: 'number', minimum: 0 }, both: { type: 'number', minimum: 0 } }),
        min_gap_m: { type: 'number', minimum: 0 },
      },
      ['count', 'center_x_m', 'center_y_m'],
    ),
    occupancy: obj({ probability: range, change_probability: range, change_time_s: range }),
    area_sensor: obj({ miss_rate: range, false_alarm_rate: range, latency_s: range }),
    object: obj({ length_m: range, mass_kg: range, grasp_offset_m: range }),
    wrist_sensor: obj({ noise_force_n: range, noise_torque_nm: range, bias_force_n: range, bias_torque_nm: range, drift_force_n_s: range, drift_torque_nm_s: range, disturbance_n: range }),
    coupling: obj({ damping_n_s_m: range, grasp_timeconst_s: range }),
    knocks: obj({ count: range, time_s: range, force_n: range, duration_s: range, vertical: { type: 'boolean' } }, ['count', 'time_s', 'force_n']),
  },
  ['version', 'family'],
);

const ajv = new Ajv({ allErrors: true, strict: true });
const validate = ajv.compile(FAMILY_SCHEMA);

type Where = { file: string; line?: number; column?: number; key?: string };

function position(doc: Document, lc: LineCounter, path: (string | number)[], file: string): Where {
  let node: unknown = doc.getIn(path, true);
  for (let cut = path.length; (node === undefined || node === null) && cut > 0; cut--) node = doc.getIn(path.slice(0, cut - 1), true);
  const r = (node as { range?: [number, number, number] } | undefined)?.range;
  const key = path.length ? path.join('.') : undefined;
  if (!r) return { file, ...(key ? { key } : {}) };
  const p = lc.linePos(r[0]);
  return { file, line: p.line, column: p.col, ...(key ? { key } : {}) };
}

function keyPosition(doc: Document, lc: LineCounter, path: (string | number)[], file: string): Where {
  const parent = doc.getIn(path.slice(0, -1), true);
  const last = path[path.length - 1];
  if (isMap(parent)) {
    const pair = parent.items.find((p) => (p.key as { value?: unknown } | null)?.value === last);
    const r = (pair?.key as { range?: [number, number, number] } | undefined)?.range;
    if (r) {
      const p = lc.linePos(r[0]);
      return { file, line: p.line, column: p.col, key: path.join('.') };
    }
  }
  return position(doc, lc, path, file);
}

function schemaProblems(errors: ErrorObject[] | null | undefined, doc: Document, lc: LineCounter, file: string): Problem[] {
  const seen = new Set<string>();
  const out: Problem[] = [];
  for (const e of errors ?? []) {
    const sub = e.instancePath.split('/').filter(Boolean).map((s) => (/^\d+$/.test(s) ? Number(s) : s));
    // A range failing both branches: one message, not one per branch.
    const inRange = e.schemaPath.includes('/anyOf/');
    if (inRange && e.keyword !== 'anyOf') continue;
    const extra = e.keyword === 'additionalProperties' ? String((e.params as { additionalProperty: string }).additionalProperty) : undefined;
    const where = extra ? keyPosition(doc, lc, [...sub, extra], file) : position(doc, lc, sub, file);
    const at = sub.length ? sub.join('.') : 'family file';
    let message = `${at} ${e.message ?? 'is not allowed'}`;
    let hint: string | undefined;
    if (extra) {
      message = `${at}: unknown key '${extra}'`;
      hint = `allowed: ${Object.keys(subSchema(sub)?.properties ?? {}).join(', ')}`;
    } else if (e.keyword === 'anyOf') {
      message = `${at} must be a number or a range [lo, hi]`;
      hint = 'e.g. 0.5 or [0.2, 0.8]';
    } else if (e.keyword === 'enum') hint = `one of ${(e.params as { allowedValues: unknown[] }).allowedValues.join(', ')}`;
    else if (e.keyword === 'const') hint = `version ${FAMILY_VERSION}`;
    const id = `${where.line}:${where.column}:${message}`;
    if (seen.has(id)) continue;
    seen.add(id);
    out.push({ code: 'family.schema', message, where, ...(hint ? { hint } : {}) });
  }
  return out;
}

function subSchema(path: (string | number)[]): { properties?: Record<string, unknown> } | undefined {
  let s: unknown = FAMILY_SCHEMA;
  for (const p of path) s = (s as { properties?: Record<string, unknown> }).properties?.[String(p)];
  return s as { properties?: Record<string, unknown> } | undefined;
}

const lo = (r: Range): number => (typeof r === 'number' ? r : r[0]);
const hi = (r: Range): number => (typeof r === 'number' ? r : r[1]);

/** Read and check a family file; every problem at once with file:line:col. `arm` gives the task defaults and limits. */
export function loadFamily(path: string, base: ArmConfig, options: SimOptionsOverrides = {}): Family {
  const text = readInputText(path, { what: 'family file', code: 'family', maxBytes: INPUT_LIMITS.params, option: '--family' });
  return parseFamily(text, path, base, options);
}

export function parseFamily(text: string, file: string, base: ArmConfig, options: SimOptionsOverrides = {}): Family {
  const lc = new LineCounter();
  const doc = parseYamlDocument(text, { lineCounter: lc, uniqueKeys: true });
  if (doc.errors.length) {
    throw new InputError(doc.errors.map((e) => {
      const p = lc.linePos(e.pos[0]);
      return { code: 'family.yaml_syntax', message: `YAML syntax: ${e.message.split('\n')[0]}`, where: { file, line: p.line, column: p.col } };
    }));
  }
  const js = yamlToJs(doc);
  if (!js.ok) throw new InputError({ code: 'family.yaml_aliases', message: js.message, where: { file }, hint: 'write the values out, or reuse anchors fewer times' });
  if (!validate(js.value)) throw new InputError(schemaProblems(validate.errors, doc, lc, file));
  const spec = js.value as unknown as FamilySpec;
  const problems: Problem[] = [];
  const at = (...p: string[]) => position(doc, lc, p, file);
  const o = simOptions({ ...options, record: false });
  const checkRange = (r: Range | undefined, path: string[], min: number, max: number, unit = '', integer = false): void => {
    if (r === undefined) return;
    const bad = (v: number) => !Number.isFinite(v) || v < min || v > max || (integer && !Number.isInteger(v));
    if (bad(lo(r)) || bad(hi(r))) {
      problems.push({ code: 'family.out_of_range', message: `${path.join('.')} = ${JSON.stringify(r)} is not allowed`, where: at(...path), hint: `${integer ? 'whole numbers ' : ''}from ${min} to ${max}${unit}` });
    } else if (lo(r) > hi(r)) {
      problems.push({ code: 'family.empty_range', message: `${path.join('.')} = [${lo(r)}, ${hi(r)}] ends before it starts`, where: at(...path), hint: '[lo, hi] with lo <= hi' });
    }
  };
  const [cx0, cx1] = o.cell_x_m;
  const [cy0, cy1] = o.cell_y_m;
  const z = spec.zones;
  if (z) {
    checkRange(z.count, ['zones', 'count'], 0, FAMILY_MAX_ZONES, '', true);
    checkRange(z.box_size_m, ['zones', 'box_size_m'], 0.01, 2, ' m');
    checkRange(z.circle_radius_m, ['zones', 'circle_radius_m'], 0.005, 1, ' m');
    checkRange(z.center_x_m, ['zones', 'center_x_m'], cx0, cx1, ' m (the cell)');
    checkRange(z.center_y_m, ['zones', 'center_y_m'], cy0, cy1, ' m (the cell)');
    const w = z.observed_by;
    if (w && !((w.left ?? 0) + (w.right ?? 0) + (w.both ?? 0) > 0)) problems.push({ code: 'family.no_observer', message: 'zones.observed_by: every weight is 0', where: at('zones', 'observed_by'), hint: 'at least one positive weight of left, right, both' });
    if ((z.shapes ?? ['box', 'circle']).includes('box') && z.box_size_m === undefined) problems.push({ code: 'family.missing_size', message: 'zones: box shapes need box_size_m', where: at('zones'), hint: 'e.g. box_size_m: [0.1, 0.3]' });
    if ((z.shapes ?? ['box', 'circle']).includes('circle') && z.circle_radius_m === undefined) problems.push({ code: 'family.missing_size', message: 'zones: circle shapes need circle_radius_m', where: at('zones'), hint: 'e.g. circle_radius_m: [0.05, 0.12]' });
  }
  const oc = spec.occupancy;
  if (oc) {
    checkRange(oc.probability, ['occupancy', 'probability'], 0, 1);
    checkRange(oc.change_probability, ['occupancy', 'change_probability'], 0, 1);
    checkRange(oc.change_time_s, ['occupancy', 'change_time_s'], 0, 3600, ' s');
    if (oc.change_probability !== undefined && hi(oc.change_probability) > 0 && oc.change_time_s === undefined) problems.push({ code: 'family.missing_time', message: 'occupancy.change_probability needs change_time_s', where: at('occupancy'), hint: 'e.g. change_time_s: [2, 10]' });
  }
  const as = spec.area_sensor;
  if (as) {
    checkRange(as.miss_rate, ['area_sensor', 'miss_rate'], 0, 1);
    checkRange(as.false_alarm_rate, ['area_sensor', 'false_alarm_rate'], 0, 1);
    checkRange(as.latency_s, ['area_sensor', 'latency_s'], 0, 10, ' s');
  }
  const ob = spec.object;
  if (ob) {
    checkRange(ob.length_m, ['object', 'length_m'], 0.1, cy1 - cy0, ' m (fits across the cell)');
    checkRange(ob.mass_kg, ['object', 'mass_kg'], 0.01, 100, ' kg');
    checkRange(ob.grasp_offset_m, ['object', 'grasp_offset_m'], 0.01, 5, ' m');
    const L = ob.length_m ?? base.task.object.length_m;
    const g = ob.grasp_offset_m ?? base.task.object.grasp_offset_m;
    if (hi(g) > lo(L) / 2) problems.push({ code: 'family.grasp_off_object', message: `object.grasp_offset_m up to ${hi(g)} m lies beyond the end of the shortest object (${lo(L)} m)`, where: at('object', ob.grasp_offset_m !== undefined ? 'grasp_offset_m' : 'length_m'), hint: `at most ${lo(L) / 2} m` });
  }
  const ws = spec.wrist_sensor;
  if (ws) {
    const lim: Record<string, number> = { noise_force_n: 50, noise_torque_nm: 5, bias_force_n: 500, bias_torque_nm: 50, drift_force_n_s: 10, drift_torque_nm_s: 1, disturbance_n: 100 };
    for (const [k, v] of Object.entries(ws)) checkRange(v as Range, ['wrist_sensor', k], 0, lim[k]!);
  }
  const cp = spec.coupling;
  if (cp) {
    checkRange(cp.damping_n_s_m, ['coupling', 'damping_n_s_m'], 1, 10000, ' N*s/m');
    checkRange(cp.grasp_timeconst_s, ['coupling', 'grasp_timeconst_s'], 2 * o.timestep_s, 0.1, ' s (at least twice the physics step)');
  }
  const kn = spec.knocks;
  if (kn) {
    checkRange(kn.count, ['knocks', 'count'], 0, 20, '', true);
    checkRange(kn.time_s, ['knocks', 'time_s'], 0, 3600, ' s');
    checkRange(kn.force_n, ['knocks', 'force_n'], 0, 1000, ' N');
    checkRange(kn.duration_s, ['knocks', 'duration_s'], o.timestep_s, 1, ' s');
  }
  if (problems.length) throw new InputError(problems);
  const family: Family = { spec, file };
  // Unreachable layouts: no world of 16 seeds passes within the redraws.
  let last: Problem[] = [];
  for (let s = 1; s <= 16; s++) {
    const d = tryDraw(family, base, options, s);
    if (d.ok) return family;
    last = d.problems;
  }
  throw new InputError({
    code: 'family.unreachable',
    message: `no world drawn from family '${spec.family}' passes the task checks (16 seeds, ${(spec.redraws ?? DEFAULT_REDRAWS) + 1} draws each); the last draw: ${last.map((p) => p.message).join('; ')}`,
    where: at(spec.zones ? 'zones' : spec.object ? 'object' : 'family'),
    hint: 'widen the ranges, use fewer or smaller zones, or keep them off the start and goal',
  });
}

/** One world drawn from a family: the task the arms and the cell share, the options of this world, the world itself. */
export interface FamilyWorld {
  readonly task: TaskParams;
  readonly options: SimOptionsOverrides;
  readonly world: World;
  /** Draws that failed the checks before this one. */
  readonly redraws: number;
}

const pick = <T>(rng: Rng, xs: readonly T[]): T => xs[Math.min(xs.length - 1, Math.floor(rng.uniform() * xs.length))]!;
const draw = (rng: Rng, r: Range | undefined, dflt: number): number => (r === undefined ? dflt : typeof r === 'number' ? r : r[0] === r[1] ? r[0] : rng.range(r[0], r[1]));
const drawInt = (rng: Rng, r: Range): number => (typeof r === 'number' ? r : r[0] + Math.min(r[1] - r[0], Math.floor(rng.uniform() * (r[1] - r[0] + 1))));

/** Draw the world of `seed`, redrawing up to the family's bound; throws InputError when every draw fails. */
export function drawFamilyWorld(family: Family, base: ArmConfig, options: SimOptionsOverrides, seed: number): FamilyWorld {
  const d = tryDraw(family, base, options, seed);
  if (d.ok) return d.value;
  throw new InputError({ code: 'family.no_world', message: `family '${family.spec.family}', seed ${seed}: no draw passed the task checks in ${(family.spec.redraws ?? DEFAULT_REDRAWS) + 1} tries; the last: ${d.problems.map((p) => p.message).join('; ')}`, where: { file: family.file }, hint: 'widen the family\'s ranges or raise redraws' });
}

function tryDraw(family: Family, base: ArmConfig, options: SimOptionsOverrides, seed: number): { ok: true; value: FamilyWorld } | { ok: false; problems: Problem[] } {
  const max = family.spec.redraws ?? DEFAULT_REDRAWS;
  let problems: Problem[] = [];
  for (let r = 0; r <= max; r++) {
    const s = r === 0 ? seed >>> 0 : worldSeed(seed, 1_000_000 + r);
    const fw = drawOnce(family.spec, base, options, s, seed);
    problems = checkFamilyWorld(fw.task, base, simOptions({ ...fw.options, record: false }), fw.world, family.spec.zones?.min_gap_m ?? 0);
    if (problems.length === 0) return { ok: true, value: { ...fw, redraws: r } };
  }
  return { ok: false, problems };
}

/** One draw (no checks). `seed` is the draw's, `worldSeedOut` the seed the world is named by. */
export function drawOnce(spec: FamilySpec, base: ArmConfig, options: SimOptionsOverrides, seed: number, worldSeedOut = seed): Omit<FamilyWorld, 'redraws'> {
  const rng = new Rng((seed ^ 0x66616d31) >>> 0);
  const t0 = base.task;
  // Zones.
  let zones: ZoneConfig[] = [...t0.zones];
  const zs = spec.zones;
  if (zs) {
    const n = drawInt(rng, zs.count);
    const w = zs.observed_by ?? { left: 1, right: 1, both: 0 };
    const wl = w.left ?? 0, wr = w.right ?? 0, wb = w.both ?? 0;
    zones = [];
    for (let k = 0; k < n; k++) {
      const shape: ZoneShape = pick<ZoneShape>(rng, zs.shapes ?? ["box", "circle"]);
      const kind = pick(rng, zs.kinds ?? ['clamp_post', 'cable_tray']);
      const cx = draw(rng, zs.center_x_m, 0);
      const cy = draw(rng, zs.center_y_m, 0);
      const size: [number, number] = shape === 'box' ? [draw(rng, zs.box_size_m, 0.2), draw(rng, zs.box_size_m, 0.2)] : [0, 0];
      const radius = shape === 'circle' ? draw(rng, zs.circle_radius_m, 0.08) : 0;
      const u = rng.uniform() * (wl + wr + wb);
      const observed_by: Observer = u < wl ? 'left' : u < wl + wr ? 'right' : 'both';
      zones.push({ name: `zone_${String(k + 1).padStart(2, '0')}`, shape, center_m: [cx, cy], size_m: size, radius_m: radius, observed_by, kind });
    }
  }
  const ob = spec.object ?? {};
  const object = { length_m: draw(rng, ob.length_m, t0.object.length_m), mass_kg: draw(rng, ob.mass_kg, t0.object.mass_kg), grasp_offset_m: draw(rng, ob.grasp_offset_m, t0.object.grasp_offset_m) };
  const base0 = simOptions({ ...options, record: false });
  const ws = spec.wrist_sensor ?? {};
  const sensor = Object.fromEntries((['noise_force_n', 'noise_torque_nm', 'bias_force_n', 'bias_torque_nm', 'drift_force_n_s', 'drift_torque_nm_s'] as const).map((k) => [k, draw(rng, ws[k], base0.sensor[k])]));
  const disturbance = draw(rng, ws.disturbance_n, base0.disturbance_n);
  const cp = spec.coupling ?? {};
  const damping = draw(rng, cp.damping_n_s_m, base0.admittance_damping_n_s_m);
  const timeconst = draw(rng, cp.grasp_timeconst_s, base0.grasp_timeconst_s);
  const oc = spec.occupancy ?? {};
  const p = draw(rng, oc.probability, base0.occupancy_probability);
  const worldOptions: SimOptionsOverrides = { ...options, sensor: { ...options.sensor, ...sensor }, admittance_damping_n_s_m: damping, grasp_timeconst_s: timeconst, occupancy_probability: p, disturbance_n: disturbance };
  // A family that draws neither zones nor the object keeps the parameters file's task object itself.
  const sameObject = object.length_m === t0.object.length_m && object.mass_kg === t0.object.mass_kg && object.grasp_offset_m === t0.object.grasp_offset_m;
  const task: TaskParams = !zs && sameObject ? t0 : { ...t0, object, zones: [...zones].sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0)) };
  // The cell's usual draw, with this world's options.
  const w0 = sampleWorld(task, simOptions({ ...worldOptions, record: false }), seed);
  // Changes, knocks, area sensor.
  const changes: ZoneChange[] = [];
  const cprob = draw(rng, oc.change_probability, 0);
  if (cprob > 0 && oc.change_time_s !== undefined) {
    task.zones.forEach((_, k) => {
      const u = rng.uniform();
      const t = draw(rng, oc.change_time_s, 0);
      if (u < cprob) changes.push({ zone: k, t_s: t, occupied: !w0.occupied[k] });
    });
  }
  changes.sort((a, b) => a.t_s - b.t_s || a.zone - b.zone);
  const knocks: Knock[] = [];
  const kn = spec.knocks;
  if (kn) {
    const n = drawInt(rng, kn.count);
    for (let i = 0; i < n; i++) {
      const t_s = draw(rng, kn.time_s, 0);
      const force_n = draw(rng, kn.force_n, 0);
      const duration_s = draw(rng, kn.duration_s, 0.03);
      const az = rng.range(-Math.PI, Math.PI);
      const el = kn.vertical ? rng.range(-Math.PI / 2, Math.PI / 2) : 0;
      knocks.push({ t_s, force_n, duration_s, direction: [Math.cos(el) * Math.cos(az), Math.cos(el) * Math.sin(az), Math.sin(el)] });
    }
    knocks.sort((a, b) => a.t_s - b.t_s);
  }
  const as = spec.area_sensor ?? {};
  const area: AreaSensorDraw = { miss_rate: draw(rng, as.miss_rate, 0), false_alarm_rate: draw(rng, as.false_alarm_rate, 0), latency_s: draw(rng, as.latency_s, 0), seed: rng.nextU32() };
  const plain = changes.length === 0 && knocks.length === 0 && area.miss_rate === 0 && area.false_alarm_rate === 0 && area.latency_s === 0;
  const world: World = { ...w0, seed: worldSeedOut, ...(plain ? {} : { changes, knocks, area_sensor: area }) };
  return { task, options: worldOptions, world };
}

/**
 * The task checks of a drawn world: those a parameters file's task passes, the cell's, zones
 * apart, and a centralized path to the goal around every zone that is ever occupied.
 */
export function checkFamilyWorld(task: TaskParams, base: ArmConfig, o: SimOptions, world: World, minGap = 0): Problem[] {
  const out: Problem[] = [];
  const L = task.object.length_m;
  if (task.object.grasp_offset_m > L / 2) out.push({ code: 'param.grasp_off_object', message: `task.object.grasp_offset_m = ${task.object.grasp_offset_m} lies beyond the object's end (length ${L} m)`, where: { key: 'task.object.grasp_offset_m' } });
  for (const arm of ['left', 'right'] as const) {
    const hidden = task.zones.filter((z) => z.observed_by !== 'both' && z.observed_by !== arm).length;
    if (hidden > base.belief.max_hidden_zones) out.push({ code: 'param.too_many_hypotheses', message: `${hidden} zones are seen only by the partner of ${arm}`, where: { key: 'belief.max_hidden_zones' } });
  }
  // The jittered start and goal of this world, as a parameters file's nominal ones are checked.
  out.push(...checkTaskForCell({ ...task, start_m: world.start_m, goal_m: world.goal_m }, { ...o, start_jitter_m: 0, goal_jitter_m: 0 }));
  out.push(...checkTaskForCell(task, o).filter((p) => p.code === 'sim.zone_outside_cell' || p.code === 'sim.object_longer_than_cell'));
  for (let a = 0; a < task.zones.length; a++) {
    for (let b = a + 1; b < task.zones.length; b++) {
      if (zoneGap(task.zones[a]!, task.zones[b]!) < minGap) out.push({ code: 'family.zones_overlap', message: `zones '${task.zones[a]!.name}' and '${task.zones[b]!.name}' are closer than ${minGap} m`, where: { key: 'zones.min_gap_m' } });
    }
  }
  if (out.length) return out;
  const ever = task.zones.map((_, k) => world.occupied[k]! || (world.changes ?? []).some((c) => c.zone === k && c.occupied));
  const path = centralizedPath(task, base, world, ever, o.cell_y_m);
  if (!path.reached) out.push({ code: 'family.no_path', message: `the centralized path does not reach the goal (${path.reason})`, where: { key: 'zones' } });
  return out;
}

/** Gap between two zones' bounding extents (negative: they overlap), m. */
function zoneGap(a: ZoneConfig, b: ZoneConfig): number {
  const ext = (z: ZoneConfig) => (z.shape === 'box' ? [z.size_m[0] / 2, z.size_m[1] / 2] : [z.radius_m, z.radius_m]);
  const [ax, ay] = ext(a);
  const [bx, by] = ext(b);
  const dx = Math.abs(a.center_m[0] - b.center_m[0]) - ax! - bx!;
  const dy = Math.abs(a.center_m[1] - b.center_m[1]) - ay! - by!;
  return Math.max(dx, dy);
}

/**
 * Integrate the shared velocity field with `occupied` known to both arms (the centralized policy,
 * kinematically, at 100 Hz) from the world's start: reached when within the goal tolerance;
 * fails on touching an occupied zone, leaving the cell, standing still for 2 s, or the time limit.
 */
export function centralizedPath(task: TaskParams, base: ArmConfig, world: World, occupied: readonly boolean[], cellY: readonly [number, number] = simOptions().cell_y_m): { reached: boolean; reason: string; t_s: number } {
  const t = { ...task, start_m: world.start_m, goal_m: world.goal_m };
  const model = new TaskModel(t, base.policy, 'left');
  const table = new SubsetTable(0);
  let mask = 0;
  occupied.forEach((o, k) => (mask |= o ? 1 << k : 0));
  const v = new Float64Array(2);
  let [x, y] = world.start_m;
  const dt = 0.01;
  const half = task.object.length_m / 2;
  let still = 0;
  for (let time = 0; time < task.time_limit_s; time += dt) {
    if (Math.hypot(x - t.goal_m[0], y - t.goal_m[1]) <= Math.max(task.goal_tolerance_m, 0.01)) return { reached: true, reason: 'reached', t_s: time };
    model.prepare(x, y);
    model.tabulate(new Int32Array(0), mask, table);
    model.velocityOf(table, 0, v);
    x += v[0]! * dt;
    y += v[1]! * dt;
    for (let k = 0; k < task.zones.length; k++) {
      if (occupied[k] && segmentHitsZone(x, y - half, y + half, task.zones[k]!)) return { reached: false, reason: `touches zone '${task.zones[k]!.name}' at x = ${x.toFixed(2)} m`, t_s: time };
    }
    if (y - half < cellY[0] || y + half > cellY[1]) return { reached: false, reason: `the object leaves the cell at y = ${y.toFixed(2)} m`, t_s: time };
    still = Math.hypot(v[0]!, v[1]!) < 1e-4 ? still + dt : 0;
    if (still > 2) return { reached: false, reason: `stuck at (${x.toFixed(2)}, ${y.toFixed(2)}) m`, t_s: time };
  }
  return { reached: false, reason: 'the time limit', t_s: task.time_limit_s };
}
