/**
 * The live ROS 2 side of one arm: two nodes in one process, under the arm's namespace, sharing
 * one ArmStep in-process (no message hop, no copy on the hot path):
 *
 * - `antiphon_roles` (plain node): the force-torque, joint and pose inputs, the wrench filter,
 *   the roles and the watchdog (it steps the arm step on every wrench sample), the correction
 *   and impact wrenches, the role, the watchdog status, the held bit, the services, diagnostics.
 * - `antiphon` (managed lifecycle node): the zone view, the belief, the recommended twist and
 *   the markers. Its lifecycle gates motion:
 *     unconfigured: parameters only;
 *     configure: builds the arm step from the parameters through the schema (refuses with every
 *       problem) and creates every subscription, publisher, service and timer of both nodes;
 *     inactive: inputs live, the twist published and exactly zero;
 *     activate: refused until the force-torque sensor is tared;
 *     deactivate: a zero twist at once, then zero while inactive;
 *     cleanup: everything of configure removed; shutdown: a final zero twist.
 *
 * Time: a sample's time is its header stamp (`ros.time_source: header`, default) or the ROS
 * time at arrival. Quiet inputs are detected on a steady clock, so an NTP step or a coarse
 * /clock does not fake staleness; a backward jump of sim time (looped bag playback) starts the
 * arm step afresh. Dropped wrench samples are counted from gaps in the header stamps.
 *
 * The same code runs on rclnodejs, on the recording stand-in (`antiphon node --dry-run`) and on
 * the test stand-in.
 */
import { MessageReader } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../bag/definitions.js';
import { decodePoseStamped, decodeWrenchStamped, JointStateDecoder } from '../bag/fast.js';
import { ArmStep, ZONE_UNKNOWN, type ArmOutputs } from '../core/arm-step.js';
import { CHECKS } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName, ResolvedValue } from '../params/spec.js';
import { InputError } from '../util/errors.js';
import { logger } from '../util/log.js';
import { OutputEncoder, StampedVector6Writer } from './encode.js';
import { checkChanges, declaration, ownerOf, RCL_OWN, type Change } from './live-params.js';
import { MarkerBuilder } from './markers.js';
import { armQos, fromRmw, incompatibility, RMW, type ArmQos, type QosProfile } from './qos.js';
import { CALLBACK, PARAMETER_TYPE, stateLabel, type RclLifecycleNode, type RclModule, type RclNode, type RclParameterValue, type RclPublisher, type RclSetParametersResult, type RclTriggerResponse } from './rcl.js';
import { INPUT_TYPES } from './topics.js';
import { configWithPath, decodePath, objectPathFromTool, PATH_TYPE, topicPathProblems, type PathOf, type TopicPath } from './path-msg.js';
import { qos as qosProfile } from './qos.js';

export const NODE_NAMES = { roles: 'antiphon_roles', inference: 'antiphon' } as const;

/** Names relative to the arm's namespace: the topics README lists (/left/wrench, /left/antiphon/role, ...). */
export const NAMES = {
  wrench: 'wrench',
  joint_states: 'joint_states',
  tool_pose: 'tool_pose',
  zone_view: 'zone_view',
  partner_held: 'partner_held',
  role: 'antiphon/role',
  belief: 'antiphon/belief',
  correction_wrench: 'antiphon/correction_wrench',
  impact_wrench: 'antiphon/impact_wrench',
  recommended_twist: 'antiphon/recommended_twist',
  watchdog: 'antiphon/watchdog',
  held: 'antiphon/held',
  markers: 'antiphon/markers',
  diagnostics: '/diagnostics',
  reset_hold: 'antiphon/reset_hold',
  tare: 'antiphon/tare',
} as const;

const TICK_NS = 10_000_000n; // 100 Hz
const STATUS_PERIOD_S = 0.1; // role, watchdog and held at 10 Hz besides every change
const DIAG_EVERY_TICKS = 100; // diagnostics at 1 Hz
const MAX_JOINTS = 64;
const SIM_JUMP_BACK_S = 0.5; // a sim-time stamp further back than this starts the arm step afresh

const log = logger('node');
/** std_msgs/msg/Bool as serialized CDR (little-endian encapsulation, one byte). */
const HELD_TRUE = Buffer.from([0, 1, 0, 0, 1]);
const HELD_FALSE = Buffer.from([0, 1, 0, 0, 0]);

function view(buf: Uint8Array): DataView {
  return new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
}

/** The header frame_id bytes equal `expected` (compared in place, no string per message). */
function frameIs(v: DataView, expected: Uint8Array): boolean {
  if (v.byteLength < 16) return false;
  const le = v.getUint8(1) === 1;
  const len = v.getUint32(12, le);
  if (len !== expected.length + 1 || 16 + len > v.byteLength) return false;
  for (let i = 0; i < expected.length; i++) if (v.getUint8(16 + i) !== expected[i]) return false;
  return true;
}

/** A Buffer view of encoded bytes (no copy). */
function asBuffer(u: Uint8Array): Buffer {
  return Buffer.from(u.buffer, u.byteOffset, u.byteLength);
}

function frameOf(v: DataView): string {
  if (v.byteLength < 16) return '?';
  const len = v.getUint32(12, v.getUint8(1) === 1);
  return new TextDecoder().decode(new Uint8Array(v.buffer, v.byteOffset + 16, Math.max(0, Math.min(len - 1, v.byteLength - 16))));
}

export interface ArmNodesOptions {
  readonly arm: ArmName;
  readonly config: ArmConfig;
  readonly values: ReadonlyMap<string, ResolvedValue>;
  /** Steady (monotonic) clock in seconds; default performance.now(). */
  readonly steadyS?: () => number;
  /**
   * Take the nominal path from this topic (nav_msgs/msg/Path of the object in the cell frame),
   * besides the parameters: a path is taken while the node is inactive, and one that arrives
   * while active waits for the next deactivate (the documented safe point). Default: none.
   */
  readonly pathTopic?: string;
  /** What the path topic's poses are (object centre, or one arm's planned tool path); default 'object'. */
  readonly pathOf?: PathOf;
}

/** The path subscription: reliable, volatile (matches reliable publishers of either durability), the last one kept. */
export const PATH_QOS = qosProfile('reliable', 1, 'volatile');

interface Counters {
  bad_messages: number;
  dropped_wrench_samples: number;
  wrong_frame: number;
  joint_messages_ignored: number;
  resets_on_clock_jump: number;
  paths_taken: number;
  paths_refused: number;
}

export class ArmNodes {
  readonly arm: ArmName;
  readonly roles: RclNode;
  readonly inference: RclLifecycleNode;
  /** The one arm step both nodes share; undefined while unconfigured. */
  step: ArmStep | undefined;
  config: ArmConfig;
  values: Map<string, ResolvedValue>;
  readonly qos: ArmQos;
  readonly counters: Counters = { bad_messages: 0, dropped_wrench_samples: 0, wrong_frame: 0, joint_messages_ignored: 0, resets_on_clock_jump: 0, paths_taken: 0, paths_refused: 0 };
  /** The path topic (ArmNodesOptions.pathTopic), or undefined. */
  readonly pathTopic: string | undefined;
  /** What the path topic's poses are (ArmNodesOptions.pathOf). */
  readonly pathOf: PathOf;
  /** The path taken from the topic (it replaces the parameters' path until cleanup). */
  private topicPath: TopicPath | undefined;
  /** A valid path that arrived while active: taken at the next deactivate. */
  private waitingPath: TopicPath | undefined;
  readonly changeLog: { t_s: number; key: string; old: unknown; value: unknown; outcome: string }[] = [];

  private readonly steadyS: () => number;
  private readonly servicesEnabled: boolean;
  private readonly timeFromHeader: boolean;
  private readonly sensorFrame: string;
  private readonly cellFrame: string;
  private readonly sensorFrameBytes: Uint8Array;
  private readonly cellFrameBytes: Uint8Array;
  private readonly jointNames: readonly string[];
  private readonly sensorInTool: Float64Array;
  private readonly holdLink: boolean;
  private readonly zoneReader = new MessageReader(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));

  // Endpoints, created at configure.
  private subs: [RclNode, object][] = [];
  private pubs: [RclNode, RclPublisher][] = [];
  private services: [RclNode, object][] = [];
  private timers: [RclNode, object][] = [];
  private twistPub: RclPublisher | undefined;
  private correctionPub: RclPublisher | undefined;
  private impactPub: RclPublisher | undefined;
  private rolePub: RclPublisher | undefined;
  private watchdogPub: RclPublisher | undefined;
  private beliefPub: RclPublisher | undefined;
  private heldPub: RclPublisher | undefined;
  private markerPub: RclPublisher | undefined;
  private diagPub: RclPublisher | undefined;
  private enc: OutputEncoder | undefined;
  private markers: MarkerBuilder | undefined;

  // Hot-path buffers, preallocated.
  private readonly wrenchRow = new Float64Array(8);
  private readonly wrench6 = this.wrenchRow.subarray(2, 8);
  private readonly pose = new Float64Array(9);
  private readonly joint = new JointStateDecoder(MAX_JOINTS);
  private readonly jointRow = new Float64Array(2 + 3 * MAX_JOINTS);
  private readonly jointVel = new Float64Array(MAX_JOINTS);
  private jointIndex = new Int32Array(0);
  private jointSelect: 'all' | 'mine' | 'other' | 'partial' = 'all';
  private readonly zero6 = new Float64Array(6);
  private zoneStates = new Uint8Array(0);
  private zoneIndex = new Map<string, number>();
  private twistW: StampedVector6Writer;
  private correctionW: StampedVector6Writer;
  private impactW: StampedVector6Writer;

  // State of the adapter.
  private active = false;
  private lastRole = -1;
  private lastHeld = false;
  private lastStatusT = Number.NEGATIVE_INFINITY;
  private lastWrenchT = Number.NaN;
  private lastWrenchSec = 0;
  private lastWrenchNsec = 0;
  private lastWrenchSteady = Number.NaN;
  private lastClockNs = -1n;
  private clockStepMax = 0;
  private clockWarnedAt = Number.NEGATIVE_INFINITY;
  private ticks = 0;
  private heldBit = false;
  private heldPublishedAt = Number.NEGATIVE_INFINITY;
  private partnerHeld = false;
  private pending: { config: ArmConfig; values: Map<string, ResolvedValue>; changes: Change[] } | undefined;
  private tareWaiting: RclTriggerResponse[] = [];
  private syncing = false;
  private qosProblems: string[] = [];
  private logErrors = 0;

  constructor(
    private readonly rcl: RclModule,
    opts: ArmNodesOptions,
  ) {
    this.arm = opts.arm;
    this.config = opts.config;
    this.values = new Map(opts.values);
    this.steadyS = opts.steadyS ?? (() => performance.now() / 1000);
    this.pathTopic = opts.pathTopic;
    this.pathOf = opts.pathOf ?? 'object';
    const ns = `/${opts.arm}`;
    this.roles = new rcl.Node(NODE_NAMES.roles, ns);
    this.inference = new rcl.lifecycle.LifecycleNode(NODE_NAMES.inference, ns);
    this.honourOverrides();
    const get = <T>(k: string): T => this.values.get(k)!.value as T;
    this.qos = armQos(this.values);
    this.servicesEnabled = get<boolean>('ros.services.enabled');
    this.timeFromHeader = get<string>('ros.time_source') === 'header';
    this.sensorFrame = get<string>('ros.frames.sensor');
    this.cellFrame = get<string>('ros.frames.cell');
    this.sensorFrameBytes = new TextEncoder().encode(this.sensorFrame);
    this.cellFrameBytes = new TextEncoder().encode(this.cellFrame);
    this.jointNames = get<string[]>('ros.joint_names');
    const q = get<number[]>('ros.frames.sensor_in_tool_xyzw');
    const n = Math.hypot(q[0]!, q[1]!, q[2]!, q[3]!);
    if (!(Math.abs(n - 1) < 1e-3)) {
      throw new InputError({ code: 'ros.bad_quaternion', message: `ros.frames.sensor_in_tool_xyzw has norm ${n.toFixed(6)}, not a unit quaternion`, where: { key: 'ros.frames.sensor_in_tool_xyzw', ...this.where('ros.frames.sensor_in_tool_xyzw') }, hint: 'x, y, z, w with x^2 + y^2 + z^2 + w^2 = 1, e.g. [0.0, 0.0, 0.0, 1.0]' });
    }
    this.sensorInTool = Float64Array.from(q, (x) => x / n);
    this.holdLink = this.values.get('watchdog.hold_link.enabled')?.value === true;
    this.twistW = new StampedVector6Writer(this.cellFrame);
    this.correctionW = new StampedVector6Writer(this.sensorFrame);
    this.impactW = new StampedVector6Writer(this.sensorFrame);
    this.declareParameters();
    const inf = this.inference;
    inf.registerOnConfigure(() => this.onConfigure());
    inf.registerOnActivate(() => this.onActivate());
    inf.registerOnDeactivate(() => this.onDeactivate());
    inf.registerOnCleanup(() => this.onCleanup());
    inf.registerOnShutdown(() => this.onShutdown());
    inf.registerOnError(() => {
      this.publishZeroTwist();
      return CALLBACK.success;
    });
  }

  private where(key: string) {
    const s = this.values.get(key)?.source;
    return s?.file ? { file: s.file, line: s.line, column: s.column } : {};
  }

  get state(): string {
    return stateLabel(this.inference.currentState);
  }

  // ---- parameters -------------------------------------------------------------------------

  /** `--ros-args -p` and `/**` overrides: honoured through the schema, or refused with every problem. */
  private honourOverrides(): void {
    const seen = new Map<string, RclParameterValue>();
    for (const n of [this.roles, this.inference]) {
      for (const o of n.getParameterOverrides()) {
        if (!RCL_OWN.has(o.name)) seen.set(o.name, o);
        else if (o.name === 'use_sim_time' && typeof o.value === 'boolean') {
          // rcl applies it itself; keep the mirror in step so the sim-time handling follows it.
          const v = this.values.get('use_sim_time');
          if (v) this.values.set('use_sim_time', { ...v, value: o.value, source: { kind: 'file', section: '--ros-args' } });
        }
      }
    }
    if (seen.size === 0) return;
    const r = checkChanges(this.arm, this.values, [...seen.values()], '--ros-args parameter override', { allowStructural: true });
    if (!r.ok) throw new InputError({ code: 'ros.bad_override', message: `parameter override refused: ${r.reason}`, where: { option: '--ros-args -p / --params-file' }, hint: 'antiphon parameters and their ranges: antiphon check-config --list; doubles need a decimal point (1.0)' });
    this.config = r.config;
    this.values = r.values;
    for (const c of r.changes) log.info({ arm: this.arm, key: c.key, file: c.old, override: c.value }, 'parameter override honoured');
  }

  private declareParameters(): void {
    for (const v of this.values.values()) {
      if (RCL_OWN.has(v.key)) continue;
      const { parameter, descriptor } = declaration(this.rcl, v);
      // ignoreOverride: the overrides were honoured (or refused) through the schema above.
      (ownerOf(v.key) === 'roles' ? this.roles : this.inference).declareParameter(parameter, descriptor, true);
    }
    if (this.values.get('use_sim_time')?.value === true) {
      for (const n of [this.roles, this.inference]) n.setParameter(new this.rcl.Parameter('use_sim_time', PARAMETER_TYPE.bool, true));
    }
    this.roles.addOnSetParametersCallback((ps) => this.onSetParameters(ps));
    this.inference.addOnSetParametersCallback((ps) => this.onSetParameters(ps));
  }

  /** A run-time change: checked through the schema now, applied at the next sample boundary. */
  onSetParameters(ps: RclParameterValue[]): RclSetParametersResult {
    if (this.syncing) return { successful: true, reason: '' };
    const ours = ps.filter((p) => !RCL_OWN.has(p.name));
    if (ours.length === 0) return { successful: true, reason: '' };
    const base = this.pending?.values ?? this.values;
    const r = checkChanges(this.arm, base, ours, 'ros2 param set');
    const t = this.nowS();
    if (!r.ok) {
      for (const p of ours) this.changeLog.push({ t_s: t, key: p.name, old: base.get(p.name)?.value, value: p.value, outcome: `refused: ${r.reason}` });
      this.report('warn', { keys: ours.map((p) => p.name), reason: r.reason }, `parameter change refused: ${r.reason}`);
      return { successful: false, reason: r.reason };
    }
    for (const w of r.warnings) this.report('warn', { arm: this.arm }, w);
    if (this.step) {
      const prev = this.pending?.changes ?? [];
      this.pending = { config: r.config, values: r.values, changes: [...prev, ...r.changes] };
    } else {
      this.config = this.withTopicPath(r.config);
      this.values = r.values;
      this.logChanges(r.changes, 'accepted (applied at configure)');
    }
    return { successful: true, reason: r.warnings.join('; ') };
  }

  private applyPending(): void {
    const p = this.pending!;
    this.pending = undefined;
    const config = this.withTopicPath(p.config);
    this.step!.applyParams(config);
    this.config = config;
    this.values = p.values;
    this.logChanges(p.changes, 'applied at the sample boundary');
  }

  private logChanges(changes: readonly Change[], outcome: string): void {
    const t = this.nowS();
    for (const c of changes) {
      this.changeLog.push({ t_s: t, key: c.key, old: c.old, value: c.value, outcome });
      this.report('info', { key: c.key, old: c.old, new: c.value, t_s: t }, `parameter ${c.key}: ${JSON.stringify(c.old)} -> ${JSON.stringify(c.value)} at t = ${t.toFixed(6)} s, ${outcome}`);
    }
  }

  /** To pino (stderr) and /rosout at once. */
  private report(level: 'info' | 'warn' | 'error', fields: object, msg: string): void {
    log[level]({ arm: this.arm, ...fields }, msg);
    this.inference.getLogger()[level](msg);
  }

  // ---- lifecycle --------------------------------------------------------------------------

  private onConfigure(): number {
    // The parameters as they stand (file, honoured overrides, accepted changes), through the schema.
    const r = checkChanges(this.arm, this.values, [], 'configure');
    if (!r.ok) {
      this.report('error', {}, `configure refused: ${r.reason}`);
      return CALLBACK.failure;
    }
    this.config = this.withTopicPath(r.config);
    try {
      this.build();
    } catch (err) {
      const msg = err instanceof InputError ? err.problems.map((p) => p.message).join('; ') : (err as Error).message;
      this.report('error', {}, `configure refused: ${msg}`);
      this.teardown();
      return CALLBACK.failure;
    }
    this.report('info', { state: 'inactive' }, 'configured: inputs live, the recommended twist is published and zero until activated');
    return CALLBACK.success;
  }

  private onActivate(): number {
    const o = this.step?.out;
    if (!o || !o.tared) {
      this.report('warn', {}, 'activate refused: the force-torque sensor is not tared yet (wait for a still window, or call antiphon/tare)');
      return CALLBACK.failure;
    }
    this.active = true;
    this.step?.setOutputEnabled(true);
    this.report('info', { state: 'active' }, 'activated: the recommended twist follows the arm step');
    return CALLBACK.success;
  }

  private onDeactivate(): number {
    this.active = false;
    this.step?.setOutputEnabled(false);
    this.publishZeroTwist();
    this.report('info', { state: 'inactive' }, 'deactivated: zero twist, held at zero while inactive');
    if (this.waitingPath) {
      const p = this.waitingPath;
      this.waitingPath = undefined;
      this.takePath(p, 'at deactivate');
    }
    return CALLBACK.success;
  }

  private onCleanup(): number {
    this.active = false;
    this.publishZeroTwist();
    if (this.markerPub && this.markers) this.markerPub.publish(this.markers.clear(this.nowS()));
    this.teardown();
    this.report('info', { state: 'unconfigured' }, 'cleaned up');
    return CALLBACK.success;
  }

  private onShutdown(): number {
    this.active = false;
    this.publishZeroTwist();
    if (this.markerPub && this.markers) this.markerPub.publish(this.markers.clear(this.nowS()));
    this.teardown();
    return CALLBACK.success;
  }

  /** The shutdown transition (from any primary state): a final zero twist, endpoints removed. */
  finalize(): void {
    if (this.state !== 'finalized') this.inference.shutdown();
  }

  destroy(): void {
    this.inference.destroy();
    this.roles.destroy();
  }

  /** Process shutdown: a final zero twist, then the nodes are destroyed (rclnodejs's SIGINT handler must be removed first). */
  shutdown(): void {
    this.finalize();
    this.destroy();
  }

  private build(): void {
    const c = this.config;
    const step = new ArmStep(c, { required: { joint_states: true, zone_view: c.task.zones.length > 0 } });
    step.setOutputEnabled(this.active); // inactive after configure: the twist is withheld
    this.step = step;
    const hidden = Array.from(step.task.hidden, (z) => c.task.zones[z]!.name);
    this.enc = new OutputEncoder(c.arm, c.roles.scheduler, hidden);
    this.zoneStates = new Uint8Array(c.task.zones.length).fill(ZONE_UNKNOWN);
    this.zoneIndex = new Map(c.task.zones.map((z, k) => [z.name, k]));
    this.lastWrenchT = Number.NaN;
    this.lastWrenchSteady = Number.NaN;
    this.lastRole = -1;
    this.lastHeld = false;
    this.lastStatusT = Number.NEGATIVE_INFINITY;
    this.jointSelect = 'all';
    const rcl = this.rcl;
    const Q = (p: QosProfile) => new rcl.QoS(RMW.history.keep_last, p.depth, RMW.reliability[p.reliability], RMW.durability[p.durability]);
    const input = { qos: Q(this.qos.input), isRaw: true };
    const R = this.roles;
    const I = this.inference;
    const sub = (n: RclNode, type: string, name: string, options: object, cb: (m: Buffer) => void) => this.subs.push([n, n.createSubscription(type, name, options, cb)]);
    const pub = (n: RclNode, type: string, name: string, p: QosProfile) => {
      const x = n.createPublisher(type, name, { qos: Q(p) });
      this.pubs.push([n, x]);
      return x;
    };
    sub(R, INPUT_TYPES.wrench, NAMES.wrench, input, (m) => this.onWrench(m));
    sub(R, INPUT_TYPES.joint_states, NAMES.joint_states, input, (m) => this.onJointState(m));
    sub(R, INPUT_TYPES.tool_pose, NAMES.tool_pose, input, (m) => this.onToolPose(m));
    sub(I, INPUT_TYPES.zone_view, NAMES.zone_view, input, (m) => this.onZoneView(m));
    if (this.pathTopic !== undefined) sub(I, PATH_TYPE, this.pathTopic, { qos: Q(PATH_QOS), isRaw: true }, (m) => this.onPath(m));
    if (this.holdLink) sub(R, 'std_msgs/msg/Bool', NAMES.partner_held, { qos: Q(this.qos.held), isRaw: true }, (m) => this.onPartnerHeld(m));
    this.correctionPub = pub(R, 'geometry_msgs/msg/WrenchStamped', NAMES.correction_wrench, this.qos.wrenches);
    this.impactPub = pub(R, 'geometry_msgs/msg/WrenchStamped', NAMES.impact_wrench, this.qos.wrenches);
    this.rolePub = pub(R, 'antiphon/msg/RoleState', NAMES.role, this.qos.status);
    this.watchdogPub = pub(R, 'antiphon/msg/WatchdogStatus', NAMES.watchdog, this.qos.status);
    this.heldPub = pub(R, 'std_msgs/msg/Bool', NAMES.held, this.qos.held);
    this.diagPub = pub(R, 'diagnostic_msgs/msg/DiagnosticArray', NAMES.diagnostics, this.qos.diagnostics);
    this.beliefPub = pub(I, 'antiphon/msg/Belief', NAMES.belief, this.qos.status);
    this.twistPub = pub(I, 'geometry_msgs/msg/TwistStamped', NAMES.recommended_twist, this.qos.twist);
    const rate = this.values.get('ros.markers.rate_hz')!.value as number;
    if (rate > 0) {
      this.markerPub = pub(I, 'visualization_msgs/msg/MarkerArray', NAMES.markers, this.qos.status);
      this.markers = new MarkerBuilder(c, this.cellFrame, Array.from(step.task.hidden), 1 / rate);
      this.timers.push([I, I.createTimer(BigInt(Math.round(1e9 / rate)), () => this.onMarkers())]);
    }
    if (this.servicesEnabled) {
      this.services.push([R, R.createService('std_srvs/srv/Trigger', NAMES.reset_hold, (_q, res) => this.onReset(res))]);
      this.services.push([R, R.createService('std_srvs/srv/Trigger', NAMES.tare, (_q, res) => this.onTare(res))]);
    } else {
      this.report('info', {}, 'ros.services.enabled is false: no reset_hold or tare service (a hold is released by restarting the node)');
    }
    this.timers.push([R, R.createTimer(TICK_NS, () => this.onTick())]);
    if (this.jointNames.length === 0) this.report('warn', {}, 'ros.joint_names is empty: every joint in JointState is taken as this arm\'s; on a shared /joint_states, list this arm\'s joints');
  }

  private teardown(): void {
    for (const [n, s] of this.subs) n.destroySubscription(s);
    for (const [n, s] of this.services) n.destroyService(s);
    for (const [n, t] of this.timers) n.destroyTimer(t);
    for (const [n, p] of this.pubs) n.destroyPublisher(p);
    this.subs = [];
    this.services = [];
    this.timers = [];
    this.pubs = [];
    this.twistPub = this.correctionPub = this.impactPub = this.rolePub = this.watchdogPub = this.beliefPub = this.heldPub = this.markerPub = this.diagPub = undefined;
    this.markers = undefined;
    this.step = undefined;
    this.pending = undefined;
    this.topicPath = undefined;
    this.waitingPath = undefined;
    for (const res of this.tareWaiting) res.send({ success: false, message: 'tare refused: the node was cleaned up before a still window' });
    this.tareWaiting = [];
  }

  // ---- the path from a topic ------------------------------------------------------------------

  private withTopicPath(config: ArmConfig): ArmConfig {
    return this.topicPath ? configWithPath(config, this.topicPath) : config;
  }

  /**
   * A nav_msgs/msg/Path on the path topic: decoded and checked as the parameters are (refused
   * with the topic and every reason); taken now while inactive, else kept for the next
   * deactivate (a newer valid path replaces a waiting one).
   */
  onPath(m: Buffer): void {
    const topic = this.pathTopic!;
    const where = { topic };
    const raw = decodePath(m, where);
    const d = 'code' in raw ? raw : objectPathFromTool(raw, this.pathOf, this.config.task.object.grasp_offset_m);
    const problems = 'code' in d ? [d] : topicPathProblems(this.config, d, this.cellFrame, where);
    if (problems.length) {
      this.counters.paths_refused++;
      this.report('warn', { topic, problems: problems.map((p) => p.code) }, `path on ${topic} refused: ${problems.map((p) => `${p.message} (allowed: ${p.hint ?? '-'})`).join('; ')}`);
      return;
    }
    const p = d as TopicPath;
    if (this.active) {
      this.waitingPath = p;
      this.report('info', { topic, poses: p.waypoints_m.length / 3 }, `path on ${topic} (${p.waypoints_m.length / 3} poses) is valid; the node is active, so it is taken at the next deactivate`);
      return;
    }
    this.takePath(p, 'while inactive');
  }

  private takePath(p: TopicPath, when: string): void {
    this.topicPath = p;
    const config = configWithPath(this.config, p);
    // Between two callbacks: a sample boundary. Tare, hold and beliefs carry over.
    if (this.step) this.step.applyParams(config);
    this.config = config;
    if (this.markers) this.markers = new MarkerBuilder(config, this.cellFrame, Array.from(this.step!.task.hidden), this.markers.period_s);
    this.counters.paths_taken++;
    this.report('info', { topic: this.pathTopic, poses: p.waypoints_m.length / 3 }, `path on ${this.pathTopic} taken ${when}: ${p.waypoints_m.length / 3} poses`);
  }

  // ---- services -----------------------------------------------------------------------------

  private onReset(res: RclTriggerResponse): void {
    const step = this.step;
    if (!step) return res.send({ success: false, message: 'not configured' });
    const r = step.requestReset();
    this.report(r.released ? 'info' : 'warn', { service: 'reset_hold', released: r.released }, `reset_hold: ${r.released ? 'released' : 'refused'} (${r.reason})`);
    res.send({ success: r.released, message: r.reason });
  }

  private onTare(res: RclTriggerResponse): void {
    const step = this.step;
    if (!step) return res.send({ success: false, message: 'not configured' });
    const r = step.requestTare();
    if (r.status === 'refused') {
      this.report('warn', { service: 'tare', outcome: 'refused' }, `tare: refused (${r.reason})`);
      return res.send({ success: false, message: r.reason });
    }
    this.report('info', { service: 'tare', outcome: 'pending' }, 'tare: requested, answered when the tare is taken or refused');
    // Answered from the sample that takes or refuses it (out.tareOutcome).
    this.tareWaiting.push(res);
  }

  private answerTare(o: ArmOutputs): void {
    const outcome = o.tareOutcome;
    if (outcome === 0) return;
    const reason = o.tareReason;
    this.report(outcome === 1 ? 'info' : 'warn', { service: 'tare', outcome: outcome === 1 ? 'taken' : 'refused' }, `tare: ${outcome === 1 ? 'taken' : 'refused'} (${reason})`);
    for (const res of this.tareWaiting) res.send({ success: outcome === 1, message: reason });
    this.tareWaiting = [];
  }

  // ---- inputs -------------------------------------------------------------------------------

  private nowS(): number {
    return Number(this.inference.now().nanoseconds) / 1e9;
  }

  private fault(topic: string, err: unknown): void {
    // A message that does not decode is a data fault: count it, log it, never crash the node.
    this.counters.bad_messages++;
    this.logErrors++;
    if (this.logErrors <= 10 || this.logErrors % 1000 === 0) this.report('error', { topic }, `${topic}: ${(err as Error).message ?? String(err)} (${this.counters.bad_messages} bad messages so far)`);
  }

  private wrongFrame(topic: string, v: DataView, expected: string): void {
    this.counters.wrong_frame++;
    this.logErrors++;
    if (this.logErrors <= 10 || this.logErrors % 1000 === 0) this.report('error', { topic }, `${topic}: frame_id '${frameOf(v)}' is not '${expected}' (ros.frames): message ignored (${this.counters.wrong_frame} so far)`);
  }

  /** Sample time: the header stamp, or ROS time at arrival (ros.time_source). */
  private timeOf(sec: number, nanosec: number): number {
    return this.timeFromHeader && (sec !== 0 || nanosec !== 0) ? sec + nanosec * 1e-9 : this.nowS();
  }

  onWrench(m: Buffer): void {
    const step = this.step;
    if (!step) return;
    if (this.pending) this.applyPending();
    const v = view(m);
    const row = this.wrenchRow;
    try {
      decodeWrenchStamped(v, 0, m.byteLength, row, 0);
    } catch (err) {
      return this.fault(NAMES.wrench, err);
    }
    if (!frameIs(v, this.sensorFrameBytes)) return this.wrongFrame(NAMES.wrench, v, this.sensorFrame);
    let sec = row[0]!;
    let nsec = row[1]!;
    const t = this.timeOf(sec, nsec);
    if (!this.timeFromHeader) {
      sec = Math.floor(t);
      nsec = Math.min(999_999_999, Math.round((t - sec) * 1e9));
    }
    const last = this.lastWrenchT;
    if (last === last) {
      const gap = t - last;
      const dt = 1 / this.config.wrench_filter.sample_rate_hz;
      if (gap > 1.5 * dt && gap < 10) this.counters.dropped_wrench_samples += Math.round(gap / dt) - 1;
      else if (gap < -SIM_JUMP_BACK_S && this.values.get('use_sim_time')?.value === true) return this.restartOnJump(t, gap);
    }
    this.lastWrenchT = t;
    this.lastWrenchSec = sec;
    this.lastWrenchNsec = nsec;
    this.lastWrenchSteady = this.steadyS();
    const o = step.step(t, this.wrench6);
    this.publishSample(o, sec, nsec);
  }

  private publishSample(o: ArmOutputs, sec: number, nsec: number): void {
    this.correctionPub!.publish(this.correctionW.write(sec, nsec, o.correction));
    this.impactPub!.publish(this.impactW.write(sec, nsec, o.impact));
    this.twistPub!.publish(this.twistW.write(sec, nsec, this.active ? o.twist : this.zero6));
    if (o.beliefUpdated) this.beliefPub!.publish(asBuffer(this.enc!.beliefMsg(o)));
    if (this.tareWaiting.length) this.answerTare(o);
    this.status(o);
  }

  private restartOnJump(t: number, gap: number): void {
    // Looped or restarted playback on sim time: the past is gone; start afresh (untared, zero twist).
    this.counters.resets_on_clock_jump++;
    this.report('warn', { gap_s: gap }, `sim time jumped back ${(-gap).toFixed(3)} s (looped playback?): the arm step starts afresh, untared, with a zero twist`);
    this.step = new ArmStep(this.config, { required: { joint_states: true, zone_view: this.config.task.zones.length > 0 } });
    this.step.setOutputEnabled(this.active);
    this.lastWrenchT = Number.NaN;
    this.lastStatusT = Number.NEGATIVE_INFINITY;
    void t;
  }

  onJointState(m: Buffer): void {
    const step = this.step;
    if (!step) return;
    const v = view(m);
    let n: number;
    try {
      n = this.joint.decode(v, 0, m.byteLength, this.jointRow, 0, MAX_JOINTS);
    } catch (err) {
      return this.fault(NAMES.joint_states, err);
    }
    if (this.joint.namesChanged) this.selectJoints();
    const sel = this.jointSelect;
    if (sel === 'other' || sel === 'partial') {
      // Another arm's joints on a shared topic (or only some of ours): not this arm's state.
      this.counters.joint_messages_ignored++;
      return;
    }
    const row = this.jointRow;
    const base = 2 + MAX_JOINTS;
    let count = 0;
    let measured = false;
    if (sel === 'all') {
      for (let q = 0; q < n; q++) {
        const x = row[base + q]!;
        this.jointVel[q] = x;
        if (x === x) measured = true;
      }
      count = n;
    } else {
      const idx = this.jointIndex;
      for (let j = 0; j < idx.length; j++) {
        const x = row[base + idx[j]!]!;
        this.jointVel[j] = x;
        if (x === x) measured = true;
      }
      count = idx.length;
    }
    step.setJointState(this.timeOf(row[0]!, row[1]!), this.jointVel, measured ? count : 0);
  }

  private selectJoints(): void {
    const names = this.joint.names;
    if (this.jointNames.length === 0) {
      this.jointSelect = 'all';
      return;
    }
    const idx = this.jointNames.map((j) => names.indexOf(j));
    const found = idx.filter((k) => k >= 0).length;
    this.jointIndex = Int32Array.from(idx);
    this.jointSelect = found === idx.length ? 'mine' : found === 0 ? 'other' : 'partial';
    if (this.jointSelect === 'partial') this.report('error', {}, `joint_states: only ${found} of this arm's ${idx.length} joints (${this.jointNames.join(', ')}) in a message naming ${names.join(', ')}: such messages are ignored`);
  }

  onToolPose(m: Buffer): void {
    const step = this.step;
    if (!step) return;
    const v = view(m);
    const p = this.pose;
    try {
      decodePoseStamped(v, 0, m.byteLength, p, 0);
    } catch (err) {
      return this.fault(NAMES.tool_pose, err);
    }
    if (!frameIs(v, this.cellFrameBytes)) return this.wrongFrame(NAMES.tool_pose, v, this.cellFrame);
    // Sensor orientation = tool orientation * sensor-in-tool (Hamilton product).
    const ax = p[5]!, ay = p[6]!, az = p[7]!, aw = p[8]!;
    const b = this.sensorInTool;
    const bx = b[0]!, by = b[1]!, bz = b[2]!, bw = b[3]!;
    const qx = aw * bx + ax * bw + ay * bz - az * by;
    const qy = aw * by - ax * bz + ay * bw + az * bx;
    const qz = aw * bz + ax * by - ay * bx + az * bw;
    const qw = aw * bw - ax * bx - ay * by - az * bz;
    step.setToolPose(this.timeOf(p[0]!, p[1]!), p[2]!, p[3]!, p[4]!, qx, qy, qz, qw);
  }

  onZoneView(m: Buffer): void {
    const step = this.step;
    if (!step) return;
    let z: { header: { stamp: { sec: number; nanosec: number } }; zones: string[]; state: ArrayLike<number> };
    try {
      z = this.zoneReader.readMessage(m);
    } catch (err) {
      return this.fault(NAMES.zone_view, err);
    }
    this.zoneStates.fill(ZONE_UNKNOWN);
    for (let k = 0; k < z.zones.length; k++) {
      const idx = this.zoneIndex.get(z.zones[k]!);
      if (idx !== undefined) this.zoneStates[idx] = z.state[k]! <= 2 ? z.state[k]! : ZONE_UNKNOWN;
    }
    step.setZoneView(this.timeOf(z.header.stamp.sec, z.header.stamp.nanosec), this.zoneStates);
  }

  onPartnerHeld(m: Buffer): void {
    const step = this.step;
    if (!step || m.byteLength < 5) return;
    this.partnerHeld = m[4] !== 0;
    const t = Number.isNaN(this.lastWrenchT) ? this.nowS() : this.lastWrenchT;
    step.setPartnerHold(t, this.partnerHeld);
  }

  // ---- timers -------------------------------------------------------------------------------

  /** 100 Hz: the clock, staleness when inputs stop, a zero twist while stopped, status and diagnostics. */
  onTick(): void {
    const step = this.step;
    if (!step) return;
    if (this.pending) this.applyPending();
    this.ticks++;
    this.watchClock();
    const steady = this.steadyS();
    const never = Number.isNaN(this.lastWrenchSteady);
    const quietFor = never ? Infinity : steady - this.lastWrenchSteady;
    if (quietFor > 10 / this.config.wrench_filter.sample_rate_hz || never) {
      // Quiet on the steady clock: date the tick from the last sample's time plus the steady time since.
      const t = never ? this.nowS() : this.timeFromHeader ? this.lastWrenchT + quietFor : this.nowS();
      const o = step.tick(t);
      o.t_s = t;
      const sec = Math.floor(t);
      this.twistPub!.publish(this.twistW.write(sec, Math.min(999_999_999, Math.round((t - sec) * 1e9)), this.zero6));
      this.status(o);
    }
    if (this.ticks % DIAG_EVERY_TICKS === 0) {
      this.checkQos();
      this.diagPub!.publish(this.diagnostics());
    }
  }

  private watchClock(): void {
    const ns = this.inference.now().nanoseconds;
    if (this.lastClockNs >= 0n && ns > this.lastClockNs) {
      const dt = Number(ns - this.lastClockNs) / 1e9;
      if (dt > this.clockStepMax) this.clockStepMax = dt;
    }
    this.lastClockNs = ns;
    const limit = this.values.get('ros.clock_step_warn_s')!.value as number;
    const sim = this.values.get('use_sim_time')?.value === true;
    if (sim && this.clockStepMax > limit) {
      const now = this.steadyS();
      if (now - this.clockWarnedAt > 10) {
        this.clockWarnedAt = now;
        this.report('warn', { clock_step_s: this.clockStepMax }, `the ROS clock advances in steps of up to ${(this.clockStepMax * 1e3).toFixed(1)} ms (above ros.clock_step_warn_s = ${limit * 1e3} ms): play bags with ros2 bag play --clock 1000 (the default 40 Hz clock steps 25 ms)`);
      }
    }
  }

  private status(o: ArmOutputs): void {
    const changed = o.role !== this.lastRole || o.held !== this.lastHeld;
    if (changed || o.t_s - this.lastStatusT >= STATUS_PERIOD_S || o.t_s < this.lastStatusT) {
      this.lastStatusT = o.t_s;
      this.rolePub!.publish(asBuffer(this.enc!.roleState(o)));
      this.watchdogPub!.publish(asBuffer(this.enc!.watchdogStatus(o.t_s, this.step!.watchdog)));
      if (o.held && !this.lastHeld) {
        const wd = this.step!.watchdog;
        const why = Array.from({ length: wd.tripsLength }, (_, k) => CHECKS[wd.tripAt(k).check]).join(', ');
        this.report('warn', { trips: why }, `safe hold latched (${why}); the recommended twist is zero until antiphon/reset_hold succeeds`);
      }
      this.lastRole = o.role;
      this.lastHeld = o.held;
    }
    // This arm's own hold: a hold caused only by the partner's is not sent back (no latch loop).
    const held = o.heldOwn;
    const steady = this.steadyS();
    if (held !== this.heldBit || steady - this.heldPublishedAt >= STATUS_PERIOD_S) {
      this.heldBit = held;
      this.heldPublishedAt = steady;
      this.heldPub!.publish(held ? HELD_TRUE : HELD_FALSE);
    }
  }

  onMarkers(): void {
    const step = this.step;
    if (!step || !this.markerPub || !this.markers) return;
    const o = step.out;
    this.markerPub.publish(this.markers.build(this.nowS(), o, this.zoneStates, step.task.objectZ));
  }

  /** Incompatible QoS on our topics, from the graph (endpoint info), checked as DDS matches. */
  checkQos(): void {
    const problems: string[] = [];
    const subs: [string, QosProfile][] = [
      [NAMES.wrench, this.qos.input], [NAMES.joint_states, this.qos.input], [NAMES.tool_pose, this.qos.input], [NAMES.zone_view, this.qos.input],
      ...(this.holdLink ? ([[NAMES.partner_held, this.qos.held]] as [string, QosProfile][]) : []),
    ];
    const ns = `/${this.arm}`;
    for (const [name, ours] of subs) {
      const node = name === NAMES.zone_view ? this.inference : this.roles;
      for (const info of safe(() => node.getPublishersInfoByTopic(`${ns}/${name}`, false))) {
        const theirs = fromRmw((info as { qos_profile?: unknown }).qos_profile);
        const why = theirs && incompatibility(theirs, ours);
        if (why) problems.push(`${ns}/${name}: publisher ${(info as { node_name?: string }).node_name ?? '?'} incompatible: ${why}`);
      }
    }
    const pubs: [string, QosProfile, RclNode][] = [
      [NAMES.recommended_twist, this.qos.twist, this.inference], [NAMES.belief, this.qos.status, this.inference], [NAMES.role, this.qos.status, this.roles],
      [NAMES.watchdog, this.qos.status, this.roles], [NAMES.correction_wrench, this.qos.wrenches, this.roles], [NAMES.impact_wrench, this.qos.wrenches, this.roles], [NAMES.held, this.qos.held, this.roles],
    ];
    for (const [name, ours, node] of pubs) {
      for (const info of safe(() => node.getSubscriptionsInfoByTopic(`${ns}/${name}`, false))) {
        const theirs = fromRmw((info as { qos_profile?: unknown }).qos_profile);
        const why = theirs && incompatibility(ours, theirs);
        if (why) problems.push(`${ns}/${name}: subscriber ${(info as { node_name?: string }).node_name ?? '?'} incompatible: ${why}`);
      }
    }
    for (const p of problems) if (!this.qosProblems.includes(p)) this.report('warn', {}, `incompatible QoS: ${p}`);
    this.qosProblems = problems;
  }

  diagnostics(): object {
    const step = this.step!;
    const o = step.out;
    const wd = step.watchdog;
    const t = this.nowS();
    const sec = Math.floor(t);
    const tripped = new Set(Array.from({ length: wd.tripsLength }, (_, k) => CHECKS[wd.tripAt(k).check]));
    const level = o.held || this.qosProblems.length ? 2 : o.inhibited || !this.active ? 1 : 0;
    const last = this.changeLog.at(-1);
    const jv = o.jointVelocityAvailable;
    const values: { key: string; value: string }[] = [
      { key: 'lifecycle_state', value: this.state },
      { key: 'role', value: o.role === 0 ? 'speaker' : 'listener' },
      { key: 'held', value: String(o.held) },
      { key: 'trips', value: [...tripped].join(',') },
      ...CHECKS.map((c) => ({ key: `check.${c}`, value: tripped.has(c) ? 'tripped' : 'ok' })),
      { key: 'tared', value: String(o.tared) },
      { key: 'joint_velocity_check', value: jv ? 'active' : 'inactive: no joint velocities measured' },
      { key: 'entropy_nats', value: o.entropy_nats.toFixed(4) },
      { key: 'time_source', value: this.timeFromHeader ? 'header stamp' : 'arrival (ROS time)' },
      { key: 'clock_step_max_s', value: this.clockStepMax.toFixed(4) },
      { key: 'qos_incompatible', value: this.qosProblems.length ? this.qosProblems.join(' | ') : 'none' },
      { key: 'hold_link', value: this.holdLink ? `enabled, partner ${this.partnerHeld ? 'held' : 'not held'}` : 'disabled' },
      { key: 'services', value: this.servicesEnabled ? 'reset_hold, tare' : 'disabled (ros.services.enabled false)' },
      { key: 'last_parameter_change', value: last ? `${last.key}: ${JSON.stringify(last.old)} -> ${JSON.stringify(last.value)} at ${last.t_s.toFixed(3)} s, ${last.outcome}` : 'none' },
      ...Object.entries(this.counters).map(([key, value]) => ({ key, value: String(value) })),
    ];
    return {
      header: { stamp: { sec, nanosec: Math.min(999_999_999, Math.round((t - sec) * 1e9)) }, frame_id: '' },
      status: [
        {
          level,
          name: `antiphon: ${this.arm} arm`,
          message: o.held ? 'safe hold' : !this.active ? `${this.state}: twist zero` : o.inhibited ? (o.tared ? 'waiting for inputs' : 'waiting for a still window to tare') : 'running',
          hardware_id: this.roles.namespace(),
          values,
        },
      ],
    };
  }

  private publishZeroTwist(): void {
    if (!this.twistPub) return;
    const t = Number.isNaN(this.lastWrenchT) ? this.nowS() : this.lastWrenchT;
    const sec = Math.floor(t);
    this.twistPub.publish(this.twistW.write(sec, Math.min(999_999_999, Math.round((t - sec) * 1e9)), this.zero6));
  }
}

function safe(f: () => object[]): object[] {
  try {
    return f() ?? [];
  } catch {
    return [];
  }
}

export type { RclModule };
