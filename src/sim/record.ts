/**
 * The time series of one episode: every wrench sample of both arms' inputs and outputs, the
 * beam's true state and the contacts. Nothing is decimated. Each channel is one typed array,
 * `width` values per sample, sample-major (value j of sample i at [i * width + j]).
 *
 * `channels()` lists every array with its name, width, unit and frame, for writers that do
 * not want to know the layout (the bag and the report).
 */

type Ctor = Float64ArrayConstructor | Uint8ArrayConstructor | Int32ArrayConstructor | Uint32ArrayConstructor;
type Arr = Float64Array | Uint8Array | Int32Array | Uint32Array;

export interface ChannelInfo {
  /** Dotted name, e.g. `left.wrench`, `beam.pose`. */
  readonly name: string;
  readonly width: number;
  readonly unit: string;
  readonly description: string;
  readonly data: Arr;
}

/** Per-arm channels (all sampled at the wrench rate). */
export interface ArmRecord {
  /** Measured wrench fed to the step: fx fy fz tx ty tz, sensor frame, N and N*m (truth + bias + drift + noise). */
  readonly wrench: Float64Array;
  /** Noise-free wrench the beam side exerts on the arm, sensor frame. */
  readonly wrenchTrue: Float64Array;
  /** Noise-free force on the arm in the cell frame (fx fy fz), N. */
  readonly forceCell: Float64Array;
  /** Joints (tool point: slides x y z, m from the start pose; six-joint arm: j1..j6, rad), and velocities, as fed. */
  readonly jointPosition: Float64Array;
  readonly jointVelocity: Float64Array;
  /** Tool pose fed: x y z qx qy qz qw, cell frame. */
  readonly toolPose: Float64Array;
  /** Zone view last fed, one state per zone (0 free, 1 occupied, 2 unknown). */
  readonly zoneView: Uint8Array;
  /** 1 at the samples where the zone view was fed (the area sensor reported). */
  readonly zoneFed: Uint8Array;
  /** Recommended twist vx vy vz wx wy wz, cell frame. */
  readonly twist: Float64Array;
  /** Velocity command applied to the motion stack (vx, vy), cell frame. */
  readonly command: Float64Array;
  /** 0 speaker, 1 listener. */
  readonly role: Uint8Array;
  readonly slot: Int32Array;
  readonly held: Uint8Array;
  readonly inhibited: Uint8Array;
  readonly tared: Uint8Array;
  readonly impactFlag: Uint8Array;
  readonly beliefUpdated: Uint8Array;
  readonly impactScore: Float64Array;
  /** Correction-band and impact-band wrench, sensor frame. */
  readonly correction: Float64Array;
  readonly impact: Float64Array;
  /** Belief over the hidden-zone hypotheses (width = hypotheses) and marginals (width = hidden zones). */
  readonly belief: Float64Array;
  readonly hiddenOccupied: Float64Array;
  readonly entropy: Float64Array;
  /** Object centre estimated by the step from its own tool pose (x, y). */
  readonly objectEstimate: Float64Array;
}

export interface ZoneMessage {
  readonly from: 'left' | 'right';
  readonly sent_s: number;
  readonly delivered_s: number;
  /** States of the sender's own zones (task order; 2 for zones it does not observe). */
  readonly states: readonly number[];
}

export interface EpisodeRecord {
  readonly samples: number;
  /** Joints per arm (width of jointPosition and jointVelocity). */
  readonly jointCount: number;
  readonly sample_rate_hz: number;
  readonly zoneNames: readonly string[];
  /** Hidden zones of each arm (bit order of its belief hypotheses). */
  readonly hiddenZones: { readonly left: readonly string[]; readonly right: readonly string[] };
  /** Sample time on the shared clock, s. */
  readonly t: Float64Array;
  readonly left: ArmRecord;
  readonly right: ArmRecord;
  /** True beam pose: centre x y z, qx qy qz qw (cell frame). */
  readonly beamPose: Float64Array;
  /** True beam velocity: linear (cell frame), angular (beam frame). */
  readonly beamVelocity: Float64Array;
  /** Opposing component of the two wrist forces along the beam axis, N (positive: squeeze). */
  readonly internalForce: Float64Array;
  /** Bitmask of zones whose obstacle touches the beam (bit = zone index). */
  readonly contacts: Uint32Array;
  /** Explicit baseline: every zone message, in send order. */
  readonly messages: readonly ZoneMessage[];
  channels(): ChannelInfo[];
}

interface Spec {
  readonly name: string;
  readonly width: number;
  readonly ctor: Ctor;
  readonly unit: string;
  readonly description: string;
}

const ARM_SPECS = (nz: number, nh: number, hyp: number, nj = 3): Array<[keyof ArmRecord, number, Ctor, string, string]> => [
  ['wrench', 6, Float64Array, 'N, N*m', 'measured wrench fed to the step (sensor frame)'],
  ['wrenchTrue', 6, Float64Array, 'N, N*m', 'noise-free wrench of the beam side on the arm (sensor frame)'],
  ['forceCell', 3, Float64Array, 'N', 'noise-free force on the arm (cell frame)'],
  ['jointPosition', nj, Float64Array, nj === 3 ? 'm' : 'rad', nj === 3 ? 'slide joints x y z from the start pose' : 'joint angles j1..j6'],
  ['jointVelocity', nj, Float64Array, nj === 3 ? 'm/s' : 'rad/s', nj === 3 ? 'slide joint velocities x y z' : 'joint velocities j1..j6'],
  ['toolPose', 7, Float64Array, 'm, 1', 'tool pose x y z qx qy qz qw (cell frame)'],
  ['zoneView', nz, Uint8Array, '1', 'zone view fed: 0 free, 1 occupied, 2 unknown'],
  ['zoneFed', 1, Uint8Array, '1', '1 where the zone view was fed at this sample'],
  ['twist', 6, Float64Array, 'm/s, rad/s', 'recommended twist (cell frame)'],
  ['command', 2, Float64Array, 'm/s', 'velocity command applied to the motion stack (cell frame)'],
  ['role', 1, Uint8Array, '1', '0 speaker, 1 listener'],
  ['slot', 1, Int32Array, '1', 'role slot: of the shared clock (alternating, lookahead) or the zone holding the turn (adaptive)'],
  ['held', 1, Uint8Array, '1', 'watchdog hold latched'],
  ['inhibited', 1, Uint8Array, '1', 'waiting for inputs or the tare'],
  ['tared', 1, Uint8Array, '1', 'wrench filter tared'],
  ['impactFlag', 1, Uint8Array, '1', 'impact flagged'],
  ['beliefUpdated', 1, Uint8Array, '1', 'a Bayes update ran at this sample'],
  ['impactScore', 1, Float64Array, '1', 'impact score'],
  ['correction', 6, Float64Array, 'N, N*m', 'correction-band wrench (sensor frame)'],
  ['impact', 6, Float64Array, 'N, N*m', 'impact-band wrench (sensor frame)'],
  ['belief', hyp, Float64Array, '1', 'probability per hidden-zone hypothesis'],
  ['hiddenOccupied', nh, Float64Array, '1', 'marginal probability each hidden zone is occupied'],
  ['entropy', 1, Float64Array, 'nats', 'belief entropy'],
  ['objectEstimate', 2, Float64Array, 'm', 'object centre from the own tool pose (x, y)'],
];

/** Growable columns; `finish()` returns views trimmed to the samples written. */
export class Recorder {
  private readonly specs: Spec[] = [];
  private readonly arrays: Arr[] = [];
  private capacity: number;
  samples = 0;

  constructor(
    readonly zoneNames: readonly string[],
    readonly hidden: { left: readonly string[]; right: readonly string[] },
    readonly hypotheses: { left: number; right: number },
    initialCapacity = 8192,
    readonly jointCount = 3,
  ) {
    this.capacity = Math.max(16, initialCapacity);
    const nz = zoneNames.length;
    const add = (name: string, width: number, ctor: Ctor, unit: string, description: string) => {
      this.specs.push({ name, width, ctor, unit, description });
      this.arrays.push(new ctor(width * this.capacity));
    };
    add('t', 1, Float64Array, 's', 'sample time (shared clock)');
    for (const side of ['left', 'right'] as const) {
      for (const [k, w, c, u, d] of ARM_SPECS(nz, hidden[side].length, hypotheses[side], jointCount)) add(`${side}.${k}`, w, c, u, d);
    }
    add('beam.pose', 7, Float64Array, 'm, 1', 'true beam pose x y z qx qy qz qw (cell frame)');
    add('beam.velocity', 6, Float64Array, 'm/s, rad/s', 'true beam velocity: linear (cell frame), angular (beam frame)');
    add('internal_force', 1, Float64Array, 'N', 'opposing component of the wrist forces along the beam axis (positive: squeeze)');
    add('contacts', 1, Uint32Array, '1', 'bitmask of zones whose obstacle touches the beam');
  }

  /** Index of a channel, for the hot loop (look it up once). */
  index(name: string): number {
    const i = this.specs.findIndex((s) => s.name === name);
    if (i < 0) throw new Error(`no channel ${name}`);
    return i;
  }

  /** The arrays of the current sample: call `begin()` then write at `base(i)`. */
  begin(): void {
    if (this.samples >= this.capacity) this.grow();
  }

  array(i: number): Arr {
    return this.arrays[i]!;
  }

  /** Offset of the current sample in channel i. */
  base(i: number): number {
    return this.samples * this.specs[i]!.width;
  }

  end(): void {
    this.samples++;
  }

  private grow(): void {
    this.capacity *= 2;
    for (let i = 0; i < this.arrays.length; i++) {
      const old = this.arrays[i]!;
      const s = this.specs[i]!;
      const next = new s.ctor(s.width * this.capacity);
      next.set(old as never);
      this.arrays[i] = next;
    }
  }

  finish(sampleRate: number, messages: readonly ZoneMessage[]): EpisodeRecord {
    const n = this.samples;
    const view = new Map<string, Arr>();
    this.specs.forEach((s, i) => view.set(s.name, this.arrays[i]!.subarray(0, n * s.width)));
    const get = <T extends Arr>(name: string) => view.get(name) as T;
    const arm = (side: 'left' | 'right'): ArmRecord => {
      const r: Record<string, Arr> = {};
      for (const [k] of ARM_SPECS(0, 0, 0)) r[k] = get(`${side}.${k}`);
      return r as unknown as ArmRecord;
    };
    const specs = this.specs;
    return {
      samples: n,
      jointCount: this.jointCount,
      sample_rate_hz: sampleRate,
      zoneNames: this.zoneNames,
      hiddenZones: this.hidden,
      t: get('t'),
      left: arm('left'),
      right: arm('right'),
      beamPose: get('beam.pose'),
      beamVelocity: get('beam.velocity'),
      internalForce: get('internal_force'),
      contacts: get('contacts'),
      messages,
      channels: () => specs.map((s) => ({ name: s.name, width: s.width, unit: s.unit, description: s.description, data: view.get(s.name)! })),
    };
  }
}
