/**
 * Bag replay: the recorded inputs of one or both arms, fed in log-time order through the same
 * arm step as the live node, on bag time. Deterministic: the same bag and parameters give the
 * same record, summary and output bag, byte for byte.
 */
import { yieldToSignals } from '../util/interrupt.js';
import { openBag, type Bag, type MessageBatch, type TopicInfo } from '../bag/index.js';
import type { QosProfile } from '../bag/types.js';
import { bagDecoders, type DecoderOptions } from '../bag/decode.js';
import { canonicalType } from '../bag/definitions.js';
import { decodePoseStamped, decodeWrenchStamped, JointStateDecoder } from '../bag/fast.js';
import type { BagOutput } from '../bag/writer.js';
import { ArmStep, TARE_OUTCOME_REFUSED, ZONE_UNKNOWN, type ArmOutputs } from '../core/arm-step.js';
import { CHECKS } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { OutputEncoder } from '../ros/encode.js';
import { INPUT_KINDS, INPUT_TYPES, inputTopic, OUTPUT_BAG_QOS, OUTPUT_KINDS, OUTPUT_TYPES, outputTopic, type InputKind } from '../ros/topics.js';
import { InputError, type Problem } from '../util/errors.js';
import { warnOnce } from '../util/log.js';
import { Column } from './series.js';
import { tripText } from '../core/trip-text.js';

export interface ReplayEvent {
  readonly arm: ArmName;
  /** Seconds from the start of the bag. */
  readonly t_s: number;
  /** `tared`, `tare_refused`, `trip`, `hold`, `release`, `role`, `impact_start`, `impact_end`, `input_missing`. */
  readonly kind: string;
  readonly text: string;
  /** For trips: the check name, input, worst value while held, limit and value when it tripped (text: `tripText`). */
  readonly check?: string;
  readonly input?: string;
  readonly value?: number;
  readonly limit?: number;
  readonly first?: number;
}

type Mutable<T> = { -readonly [K in keyof T]: T[K] };

/** Full-rate record of one replayed arm (times in seconds from the bag start). */
export interface ArmReplayRecord {
  readonly arm: ArmName;
  readonly config: ArmConfig;
  readonly topics: { readonly [K in InputKind]: string | null };
  readonly hiddenZones: readonly string[];
  /** Per wrench sample. */
  readonly t: Float64Array;
  readonly rawForce: Float64Array;
  readonly correctionForce: Float64Array;
  /**
   * Index of the first sample after the sensor was tared (`samples` when it never was). Before
   * it the bias is unknown (the held object's weight reads as force), so correction-band
   * figures, internal force and expectations use samples from here on only.
   */
  readonly taredFrom: number;
  /** Whether the joint-speed check could run throughout: every JointState carried velocities (null: no joint states were replayed). */
  readonly jointVelocityAvailable: boolean | null;
  readonly impactForce: Float64Array;
  readonly impactScore: Float64Array;
  readonly role: Float64Array;
  readonly held: Float64Array;
  readonly recommendedSpeed: Float64Array;
  /** Correction force along the cell y axis (the object axis), N, for the internal force. */
  readonly correctionAlongObject: Float64Array;
  /** Per tool pose: tool speed from successive poses, m/s. */
  readonly poseT: Float64Array;
  readonly measuredSpeed: Float64Array;
  /** Per belief update: time and the occupied probability of each hidden zone (row-major). */
  readonly beliefT: Float64Array;
  readonly beliefMarginals: Float64Array;
  readonly events: readonly ReplayEvent[];
  readonly samples: number;
}

export interface ReplayRecord {
  readonly bag: string;
  readonly storage: string;
  /** Bag start, ns since the epoch (record times are relative to it). */
  readonly startNs: bigint;
  readonly duration_s: number;
  readonly arms: readonly ArmReplayRecord[];
  /** Opposing correction force along the object (positive: squeeze), at the first arm's samples; both arms only. */
  readonly internalForce?: { readonly t: Float64Array; readonly y: Float64Array };
  readonly warnings: readonly Problem[];
}

export interface ReplayOptions {
  readonly arms: readonly ArmName[];
  readonly configs: { readonly [A in ArmName]?: ArmConfig };
  /** `from -> to`: read the input topic `from` from bag topic `to`. */
  readonly remap?: ReadonlyMap<string, string>;
  /** Window in seconds from the bag start. */
  readonly startS?: number;
  readonly endS?: number;
  /** Receives every output message (for the output bag); omit for a dry run. */
  readonly sink?: OutputSink;
  /** Called with the fraction done, at most a few hundred times. */
  readonly progress?: (fraction: number) => void;
  /** Checked after each batch (with a turn of the event loop): true stops after the batch (src/util/interrupt.ts). */
  readonly shouldStop?: () => boolean;
  /** `--definitions` sources for the types decoded generically (the zone view). */
  readonly definitions?: DecoderOptions['definitions'];
}

/** Where replay outputs go: a bag writer, or nothing. Input messages are passed through too. */
export interface OutputSink {
  /** `qos`: the offered QoS to record (outputs: what the live node offers); inputs copy the source's. */
  addTopic(name: string, type: string, definitionFrom?: TopicInfo, qos?: readonly QosProfile[]): Promise<number>;
  write(topic: number, logTimeNs: bigint, data: Uint8Array): void;
}

/** Adapts a bag writer (MCAP or sqlite3) to OutputSink, copying definitions of pass-through inputs from the source bag. */
export function writerSink(writer: BagOutput, source: Bag): OutputSink {
  return {
    async addTopic(name, type, from, qos) {
      const def = from ? source.definition(from.type) : undefined;
      return writer.addTopic({
        name,
        type,
        ...(qos ? { offeredQos: qos } : from ? { offeredQos: from.offeredQosText } : {}),
        ...(def && (def.encoding === 'ros2msg' || def.encoding === 'ros2idl') && def.text.trim() !== '' ? { definition: def.text, definitionEncoding: def.encoding } : {}),
      });
    },
    write(topic, t, data) {
      void writer.write(topic, t, data);
    },
  };
}

interface ArmRun {
  readonly arm: ArmName;
  readonly step: ArmStep;
  readonly enc: OutputEncoder;
  readonly topics: Record<InputKind, string | null>;
  readonly outTopics: number[];
  readonly inTopics: Map<number, number>;
  readonly rec: {
    t: Column; raw: Column; corr: Column; imp: Column; score: Column; role: Column; held: Column; speed: Column; corrY: Column;
    poseT: Column; poseSpeed: Column; beliefT: Column; marg: Column;
  };
  readonly events: ReplayEvent[];
  readonly joint: JointStateDecoder;
  readonly jointRow: Float64Array;
  readonly jointVel: Float64Array;
  readonly pose: Float64Array;
  readonly zoneStates: Uint8Array;
  readonly zoneIndex: Map<string, number>;
  lastPoseT: number;
  lastPoseX: number;
  lastPoseY: number;
  lastPoseZ: number;
  lastRole: number;
  lastHeld: boolean;
  lastImpact: boolean;
  trips: number;
  /** The trip events of the current hold, by trip index: their worst value follows the watchdog's. */
  tripEvents: Mutable<ReplayEvent>[];
  tared: boolean;
  taredFrom: number;
  sawJoints: boolean;
  jointsWithoutVelocity: number;
  lastStatusT: number;
}

const STATUS_PERIOD_S = 0.1;

/**
 * Every remap must do something: its `from` is an input topic of an arm (either arm, so one list
 * of remaps serves both), and its `to` a topic the bag has. A remap that matches nothing is bad
 * input (all such remaps at once), never silently ignored.
 */
export function checkRemaps(bag: Bag, remap: ReadonlyMap<string, string>): void {
  const bagTopics = new Set(bag.topics().map((t) => t.name));
  const inputs: string[] = [];
  for (const arm of ['left', 'right'] as const) for (const kind of INPUT_KINDS) inputs.push(inputTopic(arm, kind));
  const problems: Problem[] = [];
  for (const [from, to] of remap) {
    if (!inputs.includes(from)) {
      problems.push({
        code: 'replay.remap_unknown_input',
        message: `--remap ${from}:=${to}: ${from} is no input topic of antiphon`,
        where: { option: '--remap', topic: from },
        hint: `the left side names an input: ${inputs.join(', ')}`,
      });
    }
    if (!bagTopics.has(to)) {
      problems.push({
        code: 'replay.remap_no_such_topic',
        message: `--remap ${from}:=${to}: the bag has no topic ${to}`,
        where: { file: bag.path, option: '--remap', topic: to },
        hint: `the bag has ${[...bagTopics].join(', ') || 'no topics'}`,
      });
    }
  }
  if (problems.length > 0) throw new InputError(problems);
}

/** Resolve and check the input topics of each arm; missing optional inputs are warnings. */
function resolveTopics(bag: Bag, arm: ArmName, remap: ReadonlyMap<string, string>, warnings: Problem[]): Record<InputKind, string | null> {
  const byName = new Map(bag.topics().map((t) => [t.name, t]));
  const out = {} as Record<InputKind, string | null>;
  for (const kind of INPUT_KINDS) {
    const name = remap.get(inputTopic(arm, kind)) ?? inputTopic(arm, kind);
    const info = byName.get(name);
    if (!info) {
      if (kind === 'wrench') {
        throw new InputError({
          code: 'replay.missing_input',
          message: `the bag has no ${kind} topic ${name} for the ${arm} arm`,
          where: { file: bag.path, topic: name },
          hint: `remap it with --remap ${inputTopic(arm, kind)}:=<topic>; the bag has ${bag.topics().map((t) => t.name).join(', ') || 'no topics'}`,
        });
      }
      warnings.push({ code: 'replay.input_absent', message: `no ${kind} topic ${name} for the ${arm} arm: replayed without it`, where: { file: bag.path, topic: name } });
      out[kind] = null;
      continue;
    }
    if (canonicalType(info.type) !== INPUT_TYPES[kind]) {
      throw new InputError({
        code: 'replay.wrong_type',
        message: `topic ${name} has type ${info.type}, the ${kind} input needs ${INPUT_TYPES[kind]}`,
        where: { file: bag.path, topic: name },
      });
    }
    out[kind] = name;
  }
  return out;
}

/**
 * The wrench stream's timing against the configuration: the filter is designed for
 * `wrench_filter.sample_rate_hz`, so a stream at another rate (median interval more than 5 % off)
 * moves every cutoff; and samples that repeat the previous log time give the filter zero steps.
 */
function checkWrenchTiming(t: Float64Array, rateHz: number, file: string, topic: string, warnings: Problem[]): void {
  const n = t.length;
  if (n < 3) return;
  let same = 0;
  let run = 0;
  let longest = 0;
  let longestAt = 0;
  const dt: number[] = [];
  for (let i = 1; i < n; i++) {
    const d = t[i]! - t[i - 1]!;
    if (d === 0) {
      same++;
      run++;
      if (run > longest) {
        longest = run;
        longestAt = t[i]!;
      }
    } else {
      run = 0;
      if (d > 0) dt.push(d);
    }
  }
  if (same > Math.max(10, 0.01 * n)) {
    warnings.push({
      code: 'replay.wrench_same_time',
      message: `${same} of ${n} wrench samples share the log time of the sample before (longest: ${longest + 1} samples at ${longestAt.toFixed(6)} s after the start); the filter sees zero time steps there`,
      where: { file, topic },
      hint: 'the recorder stamped messages in bursts; replay uses log times',
    });
  }
  if (dt.length < 2) return;
  dt.sort((a, b) => a - b);
  const median = dt[dt.length >> 1]!;
  const measured = 1 / median;
  if (Math.abs(measured - rateHz) > 0.05 * rateHz) {
    warnings.push({
      code: 'replay.wrench_rate_mismatch',
      message: `the wrench stream runs at ${measured.toPrecision(4)} Hz (median interval ${(median * 1e3).toPrecision(4)} ms), wrench_filter.sample_rate_hz is ${rateHz}: more than 5 % apart, so every filter cutoff is off`,
      where: { file, topic, key: 'wrench_filter.sample_rate_hz' },
      hint: `set wrench_filter.sample_rate_hz to the recorded rate (about ${Math.round(measured)})`,
    });
  }
}

export async function replayBag(bag: Bag, opts: ReplayOptions): Promise<ReplayRecord> {
  const warnings: Problem[] = [];
  const remap = opts.remap ?? new Map<string, string>();
  checkRemaps(bag, remap);
  const topics = bag.topics();
  const topicIndex = new Map(topics.map((t, k) => [t.name, k]));
  const decoders = bagDecoders(bag, opts.definitions ? { definitions: opts.definitions } : {});
  const t0ns = bag.startNs;
  const startNs = opts.startS === undefined ? undefined : t0ns + BigInt(Math.round(opts.startS * 1e9));
  const endNs = opts.endS === undefined ? undefined : t0ns + BigInt(Math.round(opts.endS * 1e9));
  if (startNs !== undefined && endNs !== undefined && endNs < startNs) {
    throw new InputError({ code: 'cli.bad_window', message: `--end ${opts.endS} s is before --start ${opts.startS} s`, where: { option: '--end' } });
  }

  const runs: ArmRun[] = [];
  // Which run and input kind each bag topic index feeds (one topic may feed both arms).
  const route: { run: ArmRun; kind: InputKind }[][] = topics.map(() => []);
  for (const arm of opts.arms) {
    const config = opts.configs[arm];
    if (!config) throw new Error(`no configuration for the ${arm} arm`);
    const resolved = resolveTopics(bag, arm, remap, warnings);
    const step = new ArmStep(config, {
      jointCount: 0,
      required: { joint_states: resolved.joint_states !== null, tool_pose: resolved.tool_pose !== null, zone_view: resolved.zone_view !== null && config.task.zones.length > 0 },
    });
    const hiddenZones = Array.from(step.task.hidden, (z) => config.task.zones[z]!.name);
    const run: ArmRun = {
      arm,
      step,
      enc: new OutputEncoder(arm, config.roles.scheduler, hiddenZones),
      topics: resolved,
      outTopics: [],
      inTopics: new Map(),
      rec: (() => {
        // Sized from the recorded counts, so the columns never regrow during the replay.
        // (capped at 2^22 rows at first: a recorded count is a declaration; columns grow past it)
        const count = (kind: InputKind) => (resolved[kind] === null ? 16 : Math.max(16, Math.min(1 << 22, topics[topicIndex.get(resolved[kind]!)!]!.count)));
        const n = count('wrench');
        const nb = Math.ceil(n / Math.max(1, Math.round(config.wrench_filter.sample_rate_hz / config.belief.update_rate_hz))) + 16;
        const col = () => new Column(n);
        return {
          t: col(), raw: col(), corr: col(), imp: col(), score: col(), role: col(), held: col(), speed: col(), corrY: col(),
          poseT: new Column(count('tool_pose')), poseSpeed: new Column(count('tool_pose')),
          beliefT: new Column(nb), marg: new Column(nb * Math.max(1, config.task.zones.length)),
        };
      })(),
      events: [],
      joint: new JointStateDecoder(64),
      jointRow: new Float64Array(2 + 3 * 64),
      jointVel: new Float64Array(64),
      pose: new Float64Array(9),
      zoneStates: new Uint8Array(config.task.zones.length).fill(ZONE_UNKNOWN),
      zoneIndex: new Map(config.task.zones.map((z, k) => [z.name, k])),
      lastPoseT: Number.NaN, lastPoseX: 0, lastPoseY: 0, lastPoseZ: 0,
      lastRole: -1, lastHeld: false, lastImpact: false, trips: 0, tripEvents: [], tared: false, taredFrom: -1, sawJoints: false, jointsWithoutVelocity: 0, lastStatusT: Number.NEGATIVE_INFINITY,
    };
    for (const kind of INPUT_KINDS) {
      const name = resolved[kind];
      if (name !== null) route[topicIndex.get(name)!]!.push({ run, kind });
    }
    runs.push(run);
  }

  // Output bag: inputs passed through under their recorded names, then every output topic.
  const sink = opts.sink;
  const passThrough = new Map<number, number>();
  if (sink) {
    for (let k = 0; k < topics.length; k++) {
      if (route[k]!.length > 0) passThrough.set(k, await sink.addTopic(topics[k]!.name, topics[k]!.type, topics[k]));
    }
    for (const run of runs) for (const kind of OUTPUT_KINDS) run.outTopics.push(await sink.addTopic(outputTopic(run.arm, kind), OUTPUT_TYPES[kind], undefined, OUTPUT_BAG_QOS[kind] as unknown as readonly QosProfile[]));
  }

  const wanted = [...new Set(runs.flatMap((r) => INPUT_KINDS.map((k) => r.topics[k]).filter((n): n is string => n !== null)))];
  const readOpts = { topics: wanted, ...(startNs !== undefined ? { startNs } : {}), ...(endNs !== undefined ? { endNs } : {}) };
  const total = wanted.reduce((a, n) => a + (topics[topicIndex.get(n)!]?.count ?? 0), 0);
  let done = 0;
  let nextProgress = 0;
  const wrenchRow = new Float64Array(8);
  const wrench = wrenchRow.subarray(2, 8);
  let outOfOrder = 0;

  // Times without a BigInt per message: read the int64 log times as two 32-bit halves and
  // keep them relative to the bag start (exact below 2^53 ns, about 104 days).
  const t0s = Number(t0ns) / 1e9;
  const t0hi = Number(BigInt.asIntN(32, t0ns >> 32n));
  const t0lo = Number(BigInt.asUintN(32, t0ns));
  let lastRel = Number.NEGATIVE_INFINITY;
  const handle = (batch: MessageBatch): void => {
    const halves = new Int32Array(batch.logTimeNs.buffer, batch.logTimeNs.byteOffset, 2 * batch.count);
    for (let i = 0; i < batch.count; i++) {
      const ti = batch.topicIndex[i]!;
      const targets = route[ti]!;
      if (targets.length === 0) continue;
      const relNs = (halves[2 * i + 1]! - t0hi) * 4294967296 + ((halves[2 * i]! >>> 0) - t0lo);
      if (relNs < lastRel) outOfOrder++;
      else lastRel = relNs;
      const rel = relNs / 1e9;
      const t = t0s + rel;
      const off = batch.offset[i]!;
      const len = batch.length[i]!;
      const ns = sink ? batch.logTimeNs[i]! : 0n;
      if (sink) sink.write(passThrough.get(ti)!, ns, batch.bytes.subarray(off, off + len));
      for (let r = 0; r < targets.length; r++) {
        const { run, kind } = targets[r]!;
        try {
          switch (kind) {
            case 'wrench':
              decodeWrenchStamped(batch.view, off, len, wrenchRow, 0);
              onWrench(run, t, ns, rel, wrench);
              break;
            case 'joint_states': {
              const n = run.joint.decode(batch.view, off, len, run.jointRow, 0, 0);
              // Velocities follow the positions in the row. An empty velocity array (not measured)
              // decodes as all NaN: then no joint speed is checked. A NaN among measured ones trips.
              const v = run.jointVel;
              let measured = false;
              for (let q = 0; q < n; q++) {
                v[q] = run.jointRow[2 + 64 + q]!;
                if (!Number.isNaN(v[q]!)) measured = true;
              }
              run.step.setJointState(t, v, measured ? n : 0);
              run.sawJoints = true;
              if (!measured) run.jointsWithoutVelocity++;
              break;
            }
            case 'tool_pose': {
              const p = run.pose;
              decodePoseStamped(batch.view, off, len, p, 0);
              run.step.setToolPose(t, p[2]!, p[3]!, p[4]!, p[5]!, p[6]!, p[7]!, p[8]!);
              if (!Number.isNaN(run.lastPoseT) && rel > run.lastPoseT) {
                run.rec.poseT.push(rel);
                const dx = p[2]! - run.lastPoseX, dy = p[3]! - run.lastPoseY, dz = p[4]! - run.lastPoseZ;
                run.rec.poseSpeed.push(Math.sqrt(dx * dx + dy * dy + dz * dz) / (rel - run.lastPoseT));
              }
              run.lastPoseT = rel;
              run.lastPoseX = p[2]!;
              run.lastPoseY = p[3]!;
              run.lastPoseZ = p[4]!;
              break;
            }
            case 'zone_view': {
              const m = decoders.decode(topics[ti]!.type, batch.bytes.subarray(off, off + len), { topic: topics[ti]!.name }) as { zones: string[]; state: ArrayLike<number> };
              run.zoneStates.fill(ZONE_UNKNOWN);
              for (let z = 0; z < m.zones.length; z++) {
                const idx = run.zoneIndex.get(m.zones[z]!);
                if (idx !== undefined) run.zoneStates[idx] = m.state[z]! <= 2 ? m.state[z]! : ZONE_UNKNOWN;
              }
              run.step.setZoneView(t, run.zoneStates);
              break;
            }
          }
        } catch (err) {
          if (!(err instanceof InputError)) throw err;
          const p = err.problems[0]!;
          throw new InputError({ ...p, where: { ...p.where, file: bag.path, topic: topics[ti]!.name }, message: `${p.message} (message at ${batch.logTimeNs[i]} ns)` });
        }
      }
      done++;
      if (opts.progress && done >= nextProgress) {
        opts.progress(total ? done / total : 1);
        nextProgress = done + Math.max(1, Math.floor(total / 200));
      }
    }
  };

  const onWrench = (run: ArmRun, t: number, ns: bigint, rel: number, w: Float64Array): void => {
    const o = run.step.step(t, w);
    const f = run.step.filter;
    const rec = run.rec;
    const c = f.compensated;
    rec.t.push(rel);
    if (o.tared && run.taredFrom < 0) run.taredFrom = rec.t.length - 1;
    rec.raw.push(Math.sqrt(c[0]! * c[0]! + c[1]! * c[1]! + c[2]! * c[2]!));
    const k = o.correction;
    rec.corr.push(Math.sqrt(k[0]! * k[0]! + k[1]! * k[1]! + k[2]! * k[2]!));
    const m = o.impact;
    rec.imp.push(Math.sqrt(m[0]! * m[0]! + m[1]! * m[1]! + m[2]! * m[2]!));
    rec.score.push(o.impactScore);
    rec.role.push(o.role);
    rec.held.push(o.held ? 1 : 0);
    rec.speed.push(Math.sqrt(o.twist[0]! * o.twist[0]! + o.twist[1]! * o.twist[1]! + o.twist[2]! * o.twist[2]!));
    rec.corrY.push(correctionAlongY(run));
    if (o.beliefUpdated) {
      rec.beliefT.push(rel);
      for (let z = 0; z < o.hiddenOccupied.length; z++) rec.marg.push(o.hiddenOccupied[z]!);
    }
    const changed = o.role !== run.lastRole || o.held !== run.lastHeld;
    trackEvents(run, rel, o);
    if (sink) writeOutputs(run, ns, o, sink, changed);
  };

  for (const batch of bag.batches(readOpts)) {
    handle(batch);
    if (opts.shouldStop) {
      await yieldToSignals();
      if (opts.shouldStop()) break;
    }
  }
  opts.progress?.(1);
  for (const run of runs) {
    const topic = run.topics.wrench;
    if (topic !== null) checkWrenchTiming(run.rec.t.view(), opts.configs[run.arm]!.wrench_filter.sample_rate_hz, bag.path, topic, warnings);
  }
  if (outOfOrder > 0) warnings.push({ code: 'replay.out_of_order', message: `${outOfOrder} messages arrived out of log-time order; replayed as read`, where: { file: bag.path } });
  for (const w of bag.warnings) warnings.push(w);
  // The bag's own warnings were logged when it was opened: each reaches the user once.
  for (const w of warnings) warnOnce('replay', w);

  const arms = runs.map((run): ArmReplayRecord => ({
    arm: run.arm,
    config: run.step.config,
    topics: run.topics,
    hiddenZones: Array.from(run.step.task.hidden, (z) => run.step.config.task.zones[z]!.name),
    t: run.rec.t.view(),
    rawForce: run.rec.raw.view(),
    correctionForce: run.rec.corr.view(),
    impactForce: run.rec.imp.view(),
    impactScore: run.rec.score.view(),
    role: run.rec.role.view(),
    held: run.rec.held.view(),
    recommendedSpeed: run.rec.speed.view(),
    correctionAlongObject: run.rec.corrY.view(),
    poseT: run.rec.poseT.view(),
    measuredSpeed: run.rec.poseSpeed.view(),
    beliefT: run.rec.beliefT.view(),
    beliefMarginals: run.rec.marg.view(),
    events: run.events,
    samples: run.rec.t.length,
    taredFrom: run.taredFrom < 0 ? run.rec.t.length : run.taredFrom,
    jointVelocityAvailable: run.sawJoints ? run.jointsWithoutVelocity === 0 : null,
  }));
  const record: ReplayRecord = {
    bag: bag.path,
    storage: bag.storage,
    startNs: t0ns,
    duration_s: Number(bag.endNs - bag.startNs) / 1e9,
    arms,
    ...(arms.length === 2 ? { internalForce: internalForce(arms[0]!, arms[1]!) } : {}),
    warnings,
  };
  return record;
}

/** Correction-band force rotated into the cell frame, y component (the object axis). */
function correctionAlongY(run: ArmRun): number {
  const c = run.step.filter.correction;
  const q = run.pose;
  const qx = q[5]!, qy = q[6]!, qz = q[7]!, qw = q[8]!;
  const n = qx * qx + qy * qy + qz * qz + qw * qw;
  if (!(n > 0)) return c[1]!;
  const r10 = 2 * (qx * qy + qz * qw), r11 = 1 - 2 * (qx * qx + qz * qz), r12 = 2 * (qy * qz - qx * qw);
  return r10 * c[0]! + r11 * c[1]! + r12 * c[2]!;
}

/**
 * Internal force at the first arm's samples, with the other arm's latest value (positive:
 * squeeze), from the first sample at which both arms are tared (before it the bias is unknown).
 */
function internalForce(a: ArmReplayRecord, b: ArmReplayRecord): { t: Float64Array; y: Float64Array } {
  const [left, right] = a.arm === 'left' ? [a, b] : [b, a];
  const tLeft = left.taredFrom < left.samples ? left.t[left.taredFrom]! : Number.POSITIVE_INFINITY;
  const tRight = right.taredFrom < right.samples ? right.t[right.taredFrom]! : Number.POSITIVE_INFINITY;
  const from = Math.max(tLeft, tRight);
  let i0 = 0;
  while (i0 < left.samples && left.t[i0]! < from) i0++;
  const y = new Float64Array(left.samples - i0);
  let j = 0;
  for (let i = i0; i < left.samples; i++) {
    const t = left.t[i]!;
    while (j + 1 < right.samples && right.t[j + 1]! <= t) j++;
    const fr = right.samples > 0 && right.t[j]! <= t ? right.correctionAlongObject[j]! : 0;
    y[i - i0] = (left.correctionAlongObject[i]! - fr) / 2;
  }
  return { t: left.t.subarray(i0), y };
}

function trackEvents(run: ArmRun, rel: number, o: ArmOutputs): void {
  const wd = run.step.watchdog;
  if (o.tared && !run.tared) {
    run.tared = true;
    run.events.push({ arm: run.arm, t_s: rel, kind: 'tared', text: 'force-torque sensor tared on a still window' });
  }
  if (o.tareOutcome === TARE_OUTCOME_REFUSED) run.events.push({ arm: run.arm, t_s: rel, kind: 'tare_refused', text: `tare refused: ${o.tareReason}` });
  if (o.held && !run.lastHeld) run.events.push({ arm: run.arm, t_s: rel, kind: 'hold', text: 'safe hold latched: recommended twist zero until reset' });
  if (!o.held && run.lastHeld) run.events.push({ arm: run.arm, t_s: rel, kind: 'release', text: 'hold released by a reset (every condition clear)' });
  run.lastHeld = o.held;
  if (wd.tripsLength < run.trips) run.tripEvents.length = 0; // a reset released the hold
  for (let k = 0; k < run.tripEvents.length && k < wd.tripsLength; k++) {
    // The watchdog raises a trip's recorded value to the worst seen while held: so does its event.
    const r = wd.tripAt(k);
    const e = run.tripEvents[k]!;
    if (r.value !== e.value) {
      e.value = r.value;
      e.input = r.input;
      e.text = tripText(e as Required<ReplayEvent>);
    }
  }
  if (wd.tripsLength > run.trips) {
    for (let k = run.trips; k < wd.tripsLength; k++) {
      const r = wd.tripAt(k);
      const check = CHECKS[r.check] ?? 'unknown';
      const e: Mutable<ReplayEvent> = { arm: run.arm, t_s: rel, kind: 'trip', text: '', check, input: r.input, value: r.value, limit: r.limit, first: wd.tripFirst(k) };
      e.text = tripText(e as Required<ReplayEvent>);
      run.events.push(e);
      run.tripEvents[k] = e;
    }
  }
  run.trips = wd.tripsLength;
  if (o.role !== run.lastRole) {
    if (run.lastRole !== -1) run.events.push({ arm: run.arm, t_s: rel, kind: 'role', text: o.role === 0 ? 'speaker' : 'listener' });
    run.lastRole = o.role;
  }
  if (o.impactFlag !== run.lastImpact) {
    run.events.push({ arm: run.arm, t_s: rel, kind: o.impactFlag ? 'impact_start' : 'impact_end', text: o.impactFlag ? `impact (score ${fmt(o.impactScore)})` : 'impact over' });
    run.lastImpact = o.impactFlag;
  }
}

function writeOutputs(run: ArmRun, ns: bigint, o: ArmOutputs, sink: OutputSink, changed: boolean): void {
  const [role, belief, corr, imp, twist, watchdog] = run.outTopics as [number, number, number, number, number, number];
  const enc = run.enc;
  sink.write(twist, ns, enc.twist(o.t_s, o.twist));
  sink.write(corr, ns, enc.wrench(o.t_s, o.correction));
  sink.write(imp, ns, enc.wrench(o.t_s, o.impact));
  if (o.beliefUpdated) sink.write(belief, ns, enc.beliefMsg(o));
  if (changed || o.t_s - run.lastStatusT >= STATUS_PERIOD_S) {
    sink.write(role, ns, enc.roleState(o));
    sink.write(watchdog, ns, enc.watchdogStatus(o.t_s, run.step.watchdog));
    run.lastStatusT = o.t_s;
  }
}

function fmt(v: number): string {
  return Number.isFinite(v) ? (Math.abs(v) >= 100 ? v.toFixed(1) : v.toPrecision(3)) : String(v);
}

/** Open a bag and replay it (convenience for the CLI and tests). */
export async function replayPath(path: string, opts: ReplayOptions): Promise<ReplayRecord> {
  const bag = await openBag(path);
  try {
    return await replayBag(bag, opts);
  } finally {
    bag.close();
  }
}
