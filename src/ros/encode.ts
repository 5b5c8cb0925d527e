/**
 * CDR encoding of one arm's outputs, shared by the live node (raw publishing), bag replay and
 * the simulated cell. The wrench and twist topics use fixed-layout encoders into reused
 * buffers; the project's own messages (a few per second to 100 Hz) use the generic writer.
 */
import { MessageWriter } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../bag/definitions.js';
import { encodeTwistStamped, encodeWrenchStamped } from '../bag/fast.js';
import type { ArmOutputs } from '../core/arm-step.js';
import { CHECKS, type Watchdog } from '../core/watchdog.js';
import type { ArmName } from '../params/spec.js';
import { CELL_FRAME, sensorFrame } from './topics.js';

function writerFor(type: string): MessageWriter {
  const text = builtinDefinition(type);
  if (text === undefined) throw new Error(`no shipped definition for ${type}`);
  return new MessageWriter(parseDefinition(type, text));
}

function stamp(t: number): { sec: number; nanosec: number } {
  const sec = Math.floor(t);
  let nanosec = Math.round((t - sec) * 1e9);
  if (nanosec >= 1e9) nanosec = 1e9 - 1;
  return { sec, nanosec };
}

export class OutputEncoder {
  private readonly role = writerFor('antiphon/msg/RoleState');
  private readonly belief = writerFor('antiphon/msg/Belief');
  private readonly watchdog = writerFor('antiphon/msg/WatchdogStatus');
  private readonly row = new Float64Array(8);
  private readonly sensor: string;

  constructor(
    readonly arm: ArmName,
    readonly scheduler: string,
    readonly hiddenZones: readonly string[],
  ) {
    this.sensor = sensorFrame(arm);
  }

  private header(t: number, frame: string): { stamp: { sec: number; nanosec: number }; frame_id: string } {
    return { stamp: stamp(t), frame_id: frame };
  }

  /** geometry_msgs/WrenchStamped of a 6-vector (sensor frame). */
  wrench(t: number, w: Float64Array): Uint8Array {
    const r = this.row;
    const s = stamp(t);
    r[0] = s.sec;
    r[1] = s.nanosec;
    for (let k = 0; k < 6; k++) r[2 + k] = w[k]!;
    return encodeWrenchStamped(r, 0, this.sensor);
  }

  /** geometry_msgs/TwistStamped of the recommended twist (cell frame). */
  twist(t: number, v: Float64Array): Uint8Array {
    const r = this.row;
    const s = stamp(t);
    r[0] = s.sec;
    r[1] = s.nanosec;
    for (let k = 0; k < 6; k++) r[2 + k] = v[k]!;
    return encodeTwistStamped(r, 0, CELL_FRAME);
  }

  roleState(o: ArmOutputs): Uint8Array {
    return this.role.writeMessage({
      header: this.header(o.t_s, CELL_FRAME),
      role: o.role,
      scheduler: this.scheduler,
      slot: BigInt(o.slot),
      time_to_switch_s: o.timeToSwitch_s,
      switch_deferred: o.switchDeferred,
    });
  }

  beliefMsg(o: ArmOutputs): Uint8Array {
    return this.belief.writeMessage({
      header: this.header(o.t_s, CELL_FRAME),
      hidden_zones: this.hiddenZones,
      probability: o.belief,
      zone_occupied_probability: o.hiddenOccupied,
      entropy_nats: o.entropy_nats,
      most_likely: o.mostLikely,
      updated: o.beliefUpdated,
    });
  }

  watchdogStatus(t: number, wd: Watchdog): Uint8Array {
    const trips = [];
    for (let k = 0; k < wd.tripsLength; k++) {
      const r = wd.tripAt(k);
      trips.push({ check: CHECKS[r.check] ?? 'unknown', input: r.input, value: r.value, limit: r.limit, stamp: stamp(r.t_s) });
    }
    return this.watchdog.writeMessage({
      header: this.header(t, CELL_FRAME),
      held: wd.held,
      ready_to_release: wd.readyToRelease,
      clear_for_s: wd.clearFor_s,
      trips,
    });
  }
}

/**
 * A geometry_msgs WrenchStamped or TwistStamped (same layout: header, six float64) written in
 * place into one preallocated Buffer: the frame is fixed at construction, so publishing a
 * sample writes the stamp and six numbers and allocates nothing.
 */
export class StampedVector6Writer {
  readonly buffer: Buffer;
  private readonly view: DataView;
  private readonly at: number;

  constructor(readonly frameId: string) {
    const template = encodeWrenchStamped(new Float64Array(8), 0, frameId);
    this.buffer = Buffer.from(template);
    this.view = new DataView(this.buffer.buffer, this.buffer.byteOffset, this.buffer.byteLength);
    this.at = this.buffer.byteLength - 48;
  }

  write(sec: number, nanosec: number, v: ArrayLike<number>): Buffer {
    const d = this.view;
    d.setInt32(4, sec, true);
    d.setUint32(8, nanosec, true);
    for (let k = 0; k < 6; k++) d.setFloat64(this.at + 8 * k, v[k]!, true);
    return this.buffer;
  }
}
