/**
 * The live ROS 2 node of one arm: subscribes to the arm driver's topics (raw CDR, decoded by
 * the same fixed-layout decoders as replay), runs the arm step on ROS time, and publishes the
 * outputs as serialized CDR. It adds only what a live cell needs: a timer that keeps the
 * watchdog's staleness checks running (and republishes a zero twist) when inputs stop,
 * services to reset a hold and to tare, read-only parameters mirroring the resolved
 * configuration, and diagnostics.
 */
import { MessageReader } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../bag/definitions.js';
import { decodePoseStamped, decodeWrenchStamped, JointStateDecoder } from '../bag/fast.js';
import { ArmStep, ZONE_UNKNOWN, type ArmOutputs } from '../core/arm-step.js';
import { CHECKS } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';
import type { ResolvedValue } from '../params/spec.js';
import { OutputEncoder } from './encode.js';
import { PARAMETER_TYPE, type RclModule, type RclNode, type RclPublisher } from './rcl.js';
import { INPUT_TYPES, OUTPUT_KINDS, OUTPUT_TYPES, type InputKind, type OutputKind } from './topics.js';

/** Node-relative names: inputs in the node's namespace, outputs in its private namespace. */
export const LIVE_INPUTS: { readonly [K in InputKind]: string } = { wrench: 'wrench', joint_states: 'joint_states', tool_pose: 'tool_pose', zone_view: 'zone_view' };
export const LIVE_OUTPUT = (kind: OutputKind) => `~/${kind}`;

const TICK_NS = 10_000_000n; // 100 Hz
const STATUS_PERIOD_S = 0.1; // role and watchdog at 10 Hz besides every change
const DIAG_EVERY_TICKS = 100; // diagnostics at 1 Hz

function view(buf: Uint8Array): DataView {
  return new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
}

function asBuffer(u: Uint8Array): Buffer {
  return Buffer.from(u.buffer, u.byteOffset, u.byteLength);
}

export class ArmNode {
  readonly step: ArmStep;
  private readonly enc: OutputEncoder;
  private readonly pubs = new Map<OutputKind, RclPublisher>();
  private readonly diag: RclPublisher;
  private readonly wrenchRow = new Float64Array(8);
  private readonly pose = new Float64Array(9);
  private readonly joint = new JointStateDecoder(64);
  private readonly jointRow = new Float64Array(2 + 3 * 64);
  private readonly jointVel = new Float64Array(64);
  private readonly zoneStates: Uint8Array;
  private readonly zoneIndex: Map<string, number>;
  private readonly zoneReader = new MessageReader(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));
  private lastRole = -1;
  private lastHeld = false;
  private ticks = 0;
  private lastStatusT = Number.NEGATIVE_INFINITY;
  private lastWrenchT = Number.NaN;
  private badMessages = 0;

  constructor(
    private readonly rcl: RclModule,
    readonly node: RclNode,
    readonly config: ArmConfig,
    values: ReadonlyMap<string, ResolvedValue>,
  ) {
    this.step = new ArmStep(config, { required: { joint_states: true, zone_view: config.task.zones.length > 0 } });
    const hidden = Array.from(this.step.task.hidden, (z) => config.task.zones[z]!.name);
    this.enc = new OutputEncoder(config.arm, config.roles.scheduler, hidden);
    this.zoneStates = new Uint8Array(config.task.zones.length).fill(ZONE_UNKNOWN);
    this.zoneIndex = new Map(config.task.zones.map((z, k) => [z.name, k]));
    this.declareParameters(values);
    const sensor = { qos: rcl.QoS.profileSensorData, isRaw: true };
    const reliable = { qos: rcl.QoS.profileDefault, isRaw: true };
    node.createSubscription(INPUT_TYPES.wrench, LIVE_INPUTS.wrench, sensor, (m) => this.onWrench(m));
    node.createSubscription(INPUT_TYPES.joint_states, LIVE_INPUTS.joint_states, sensor, (m) => this.onJointState(m));
    node.createSubscription(INPUT_TYPES.tool_pose, LIVE_INPUTS.tool_pose, sensor, (m) => this.onToolPose(m));
    node.createSubscription(INPUT_TYPES.zone_view, LIVE_INPUTS.zone_view, reliable, (m) => this.onZoneView(m));
    for (const kind of OUTPUT_KINDS) {
      const qos = kind === 'role' || kind === 'watchdog' ? rcl.QoS.profileDefault : rcl.QoS.profileSensorData;
      this.pubs.set(kind, node.createPublisher(OUTPUT_TYPES[kind], LIVE_OUTPUT(kind), { qos }));
    }
    this.diag = node.createPublisher('diagnostic_msgs/msg/DiagnosticArray', '/diagnostics');
    node.createService('std_srvs/srv/Trigger', '~/reset_hold', (_req, res) => {
      const r = this.step.requestReset();
      node.getLogger().info(`reset_hold: ${r.reason}`);
      res.send({ success: r.released, message: r.reason });
    });
    node.createService('std_srvs/srv/Trigger', '~/tare', (_req, res) => {
      this.step.requestTare();
      res.send({ success: true, message: 'tare requested: it completes on the next still window' });
    });
    node.createTimer(TICK_NS, () => this.onTick());
  }

  private now(): number {
    return Number(this.node.now().nanoseconds) / 1e9;
  }

  /** Parameters mirror the resolved configuration, read-only: change them in the file and restart. */
  private declareParameters(values: ReadonlyMap<string, ResolvedValue>): void {
    const { Parameter, ParameterDescriptor } = this.rcl;
    for (const v of values.values()) {
      const type = PARAMETER_TYPE[v.spec.type];
      const value = v.spec.type === 'integer' ? BigInt(v.value as number) : v.value;
      const unit = v.spec.unit && v.spec.unit !== '1' ? ` [${v.spec.unit}]` : '';
      this.node.declareParameter(new Parameter(v.key, type, value), new ParameterDescriptor(v.key, type, `${v.spec.description}${unit}`, true));
    }
    this.node.addOnSetParametersCallback(() => ({ successful: false, reason: 'antiphon parameters are read-only at run time: change the parameters file, check it with antiphon check-config, and restart the node' }));
  }

  private guard(topic: string, fn: () => void): void {
    try {
      fn();
    } catch (err) {
      // A message that does not decode is a data fault: count it, log it, never crash the node.
      this.badMessages++;
      if (this.badMessages <= 10 || this.badMessages % 1000 === 0) this.node.getLogger().error(`${topic}: ${(err as Error).message} (${this.badMessages} bad messages so far)`);
    }
  }

  onWrench(m: Uint8Array): void {
    this.guard(LIVE_INPUTS.wrench, () => {
      decodeWrenchStamped(view(m), 0, m.byteLength, this.wrenchRow, 0);
      const t = this.now();
      this.lastWrenchT = t;
      const o = this.step.step(t, this.wrenchRow.subarray(2, 8));
      this.publish(o, false);
    });
  }

  onJointState(m: Uint8Array): void {
    this.guard(LIVE_INPUTS.joint_states, () => {
      const n = this.joint.decode(view(m), 0, m.byteLength, this.jointRow, 0, 0);
      let measured = false;
      for (let q = 0; q < n; q++) {
        this.jointVel[q] = this.jointRow[2 + 64 + q]!;
        if (!Number.isNaN(this.jointVel[q]!)) measured = true;
      }
      this.step.setJointState(this.now(), this.jointVel, measured ? n : 0);
    });
  }

  onToolPose(m: Uint8Array): void {
    this.guard(LIVE_INPUTS.tool_pose, () => {
      const p = this.pose;
      decodePoseStamped(view(m), 0, m.byteLength, p, 0);
      this.step.setToolPose(this.now(), p[2]!, p[3]!, p[4]!, p[5]!, p[6]!, p[7]!, p[8]!);
    });
  }

  onZoneView(m: Uint8Array): void {
    this.guard(LIVE_INPUTS.zone_view, () => {
      const z = this.zoneReader.readMessage<{ zones: string[]; state: ArrayLike<number> }>(m);
      this.zoneStates.fill(ZONE_UNKNOWN);
      for (let k = 0; k < z.zones.length; k++) {
        const idx = this.zoneIndex.get(z.zones[k]!);
        if (idx !== undefined) this.zoneStates[idx] = z.state[k]! <= 2 ? z.state[k]! : ZONE_UNKNOWN;
      }
      this.step.setZoneView(this.now(), this.zoneStates);
    });
  }

  /** 100 Hz: staleness when inputs stop, a zero twist while stopped, status and diagnostics. */
  onTick(): void {
    this.ticks++;
    const t = this.now();
    const quiet = Number.isNaN(this.lastWrenchT) || t - this.lastWrenchT > 0.01;
    if (quiet) {
      const o = this.step.tick(t);
      o.t_s = t;
      // Inputs stopped: keep telling the motion stack to stand still.
      if (o.held || o.inhibited || Number.isNaN(this.lastWrenchT)) this.pubs.get('recommended_twist')!.publish(asBuffer(this.enc.twist(t, o.twist.fill(0))));
      this.publish(o, true);
    }
    if (this.ticks % DIAG_EVERY_TICKS === 0) this.diag.publish(this.diagnostics(t));
  }

  private publish(o: ArmOutputs, statusOnly: boolean): void {
    const enc = this.enc;
    if (!statusOnly) {
      this.pubs.get('recommended_twist')!.publish(asBuffer(enc.twist(o.t_s, o.twist)));
      this.pubs.get('correction_wrench')!.publish(asBuffer(enc.wrench(o.t_s, o.correction)));
      this.pubs.get('impact_wrench')!.publish(asBuffer(enc.wrench(o.t_s, o.impact)));
      if (o.beliefUpdated) this.pubs.get('belief')!.publish(asBuffer(enc.beliefMsg(o)));
    }
    const changed = o.role !== this.lastRole || o.held !== this.lastHeld;
    if (changed || o.t_s - this.lastStatusT >= STATUS_PERIOD_S) {
      this.lastStatusT = o.t_s;
      this.pubs.get('role')!.publish(asBuffer(enc.roleState(o)));
      this.pubs.get('watchdog')!.publish(asBuffer(enc.watchdogStatus(o.t_s, this.step.watchdog)));
      if (o.held && !this.lastHeld) {
        const wd = this.step.watchdog;
        const why = Array.from({ length: wd.tripsLength }, (_, k) => CHECKS[wd.tripAt(k).check]).join(', ');
        this.node.getLogger().warn(`safe hold latched (${why}); the recommended twist is zero until ~/reset_hold succeeds`);
      }
      this.lastRole = o.role;
      this.lastHeld = o.held;
    }
  }

  private diagnostics(t: number): object {
    const o = this.step.out;
    const wd = this.step.watchdog;
    const level = o.held ? 2 : o.inhibited ? 1 : 0;
    const sec = Math.floor(t);
    return {
      header: { stamp: { sec, nanosec: Math.round((t - sec) * 1e9) }, frame_id: '' },
      status: [
        {
          level,
          name: `antiphon: ${this.config.arm} arm`,
          message: o.held ? 'safe hold' : o.inhibited ? (o.tared ? 'waiting for inputs' : 'waiting for a still window to tare') : 'running',
          hardware_id: this.node.namespace(),
          values: [
            { key: 'role', value: o.role === 0 ? 'speaker' : 'listener' },
            { key: 'held', value: String(o.held) },
            { key: 'trips', value: Array.from({ length: wd.tripsLength }, (_, k) => CHECKS[wd.tripAt(k).check]).join(',') },
            { key: 'tared', value: String(o.tared) },
            { key: 'entropy_nats', value: o.entropy_nats.toFixed(4) },
            { key: 'bad_messages', value: String(this.badMessages) },
          ],
        },
      ],
    };
  }
}
