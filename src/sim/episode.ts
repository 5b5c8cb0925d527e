/**
 * One episode of the simulated cell: a world drawn from a seed, a strategy applied to both
 * arms' configurations, two decentralized arm steps (each fed only its own wrench, joint
 * states, tool pose and zone view) and the MuJoCo cell between them. The arms share nothing
 * but the forces through the beam, and, for the explicit baseline only, zone messages.
 *
 * Deterministic: the same inputs and seed give the same summary and record bit for bit.
 */
import type { MainModule } from 'mujoco-js';
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN, type ArmOutputs } from '../core/arm-step.js';
import { CHECKS } from '../core/watchdog.js';
import type { ArmConfig, TaskParams } from '../params/config.js';
import { InputError, type Problem } from '../util/errors.js';
import { SensorModel, SimCell } from './cell.js';
import { EpisodeMeasures, type CommitmentSummary, type EpisodeMeasureSummary, type PartnerHoldSummary, type SameRoleSummary } from './measures.js';
import type { CalibrationSummary } from './belief-metrics.js';
import { loadMujoco } from './mujoco.js';
import { Rng } from '../util/rng.js';
import { DISTURBANCE_TAU_S, simOptions, type SimOptions, type SimOptionsOverrides } from './options.js';
import { Recorder, type EpisodeRecord, type ZoneMessage } from './record.js';
import { applyStrategy, strategyLabel, type StrategySpec } from './strategies.js';
import { BeliefTiming, beliefTimingSummary, countFalseImpactHolds, type BeliefTimingSummary, type BeliefTimingSums } from './belief-timing.js';
import { segmentHitsZone } from '../params/config.js';
import { checkTaskForCell, sampleWorld, type ArmSide, type Knock, type World } from './world.js';
import { isPlanar, taskPath, zoneSolid } from '../params/task-geometry.js';
import { axisFromVertical, WRIST_SINGULARITY_MARGIN_RAD, zxyRates } from './wrist.js';
import { capsuleClearance, type Solid } from '../geometry/solids.js';
import { pathPoses } from './mjcf.js';

export type EndReason = 'success' | 'time_limit' | 'stall' | 'hold';

export interface HoldReason {
  readonly check: string;
  readonly input: string;
  /** Worst value while held. */
  readonly value: number;
  readonly limit: number;
  readonly t_s: number;
  /** Value when it tripped. */
  readonly first: number;
}

export interface HoldEvent {
  readonly arm: ArmSide;
  readonly start_s: number;
  /** When the reset released it; null if it never did. */
  readonly end_s: number | null;
  readonly reasons: readonly HoldReason[];
}

export interface EpisodeSummary {
  readonly seed: number;
  readonly strategy: string;
  readonly k: number | null;
  /** Which arms the cell had: tool_point or six_joint. */
  readonly arm_model: string;
  readonly world: {
    readonly occupied: Readonly<Record<string, boolean>>;
    readonly start_m: readonly [number, number];
    readonly goal_m: readonly [number, number];
    /** Every zone of this world (task order) with its state at the start and its changes as they happened. */
    readonly zones: readonly WorldZoneSummary[];
    /** Knocks on the object (ground truth for the impact detector). */
    readonly knocks: readonly Knock[];
  };
  /** The scenario family the world was drawn from; null without one. */
  readonly family: { readonly name: string; readonly redraws: number } | null;
  readonly success: boolean;
  readonly end_reason: EndReason;
  /** Simulated time at the end, s. */
  readonly duration_s: number;
  /** Time of success, s; null when the goal was not reached. */
  readonly time_to_goal_s: number | null;
  readonly final_position_m: readonly [number, number];
  readonly final_distance_m: number;
  readonly collisions: {
    /** Contact onsets between the beam and an obstacle (debounced). */
    readonly count: number;
    readonly first_s: number | null;
    readonly per_zone: Readonly<Record<string, number>>;
    /** Total time any obstacle touched the beam, s. */
    readonly contact_s: number;
  };
  readonly internal_force: {
    /** Largest |opposing component of the wrist forces along the beam axis| after the settle time, N. */
    readonly peak_n: number;
    /** Its mean absolute value over the same span, N. */
    readonly mean_abs_n: number;
  };
  readonly holds: {
    readonly count: number;
    readonly reasons: Readonly<Record<string, number>>;
    readonly events: readonly HoldEvent[];
    /** Holds with an impact trip and no knock or collision onset within 0.5 s before it. */
    readonly false_impact: number;
  };
  readonly role_switches: { readonly left: number; readonly right: number };
  readonly tared_at_s: { readonly left: number | null; readonly right: number | null };
  readonly samples: number;
  /** Calibration of both arms' listener beliefs against this world's occupancy (pairs of both arms pooled). */
  readonly belief: { readonly calibration: CalibrationSummary } & BeliefTimingSummary;
  /** Agreement of the two arms' common-knowledge commitments at the role switches. */
  readonly commitments: CommitmentSummary;
  /** Time with both arms in the same role. */
  readonly same_role: SameRoleSummary;
  /** The injected hold and the partner's reaction; null without `inject_hold`. */
  readonly partner_hold: PartnerHoldSummary | null;
  /** Stationary standard deviation of the correction-band disturbance on each wrist, N (0: none). */
  readonly disturbance_n: number;
}

export interface WorldZoneSummary {
  readonly name: string;
  readonly shape: string;
  readonly kind: string;
  readonly center_m: readonly [number, number];
  /** Box: side lengths (x, y), m; null for a circle. */
  readonly size_m: readonly [number, number] | null;
  /** Circle, cylinder, sphere: radius, m; null for a box. */
  readonly radius_m: number | null;
  readonly observed_by: string;
  /** At the start. */
  readonly occupied: boolean;
  /** When the zone changed state during the episode (a change to occupied waits until the object is clear of the zone). */
  readonly changes: readonly { readonly t_s: number; readonly occupied: boolean }[];
}

export interface EpisodeInput {
  /** Both arms' configurations as loaded (the nominal task; the world jitters start and goal). */
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly strategy: StrategySpec;
  readonly seed: number;
  readonly options?: SimOptionsOverrides;
  /** Simulated time limit, s; default task.time_limit_s. */
  readonly duration_s?: number;
  /** Use this world instead of drawing one from the seed (tests). */
  readonly world?: World;
  /** The scenario family the world came from (for the summary). */
  readonly family?: { readonly name: string; readonly redraws: number };
  /** Override the commands (tests of the physics): called at each sample after the steps ran. */
  readonly commandOverride?: (t: number, side: ArmSide, out: Float64Array) => void;
  /** Wrap what each arm is fed (fault campaigns: src/faults/inject.ts); default: the arm step itself. */
  readonly feed?: (side: ArmSide, arm: ArmStep) => ArmFeed;
}

/** What the episode calls on an arm each sample. */
export type ArmFeed = Pick<ArmStep, 'setJointState' | 'setToolPose' | 'setZoneView' | 'step' | 'requestReset' | 'watchdog'>;

export interface EpisodeResult {
  readonly summary: EpisodeSummary;
  /** The configurations the two arm steps ran with (the strategy applied). */
  readonly configs: { readonly left: ArmConfig; readonly right: ArmConfig };
  readonly record: EpisodeRecord | null;
  readonly world: World;
  readonly xml: string;
  /** The measurements with their raw sums (for pooling over a batch). */
  readonly measures: EpisodeMeasureSummary;
  /** The belief timing sums (for pooling over a batch). */
  readonly beliefTiming: BeliefTimingSums;
}

/** Problems that must stop a run before any simulation starts. */
export function checkEpisodeSetup(left: ArmConfig, options: SimOptions): Problem[] {
  const out = checkTaskForCell(left.task, options);
  if (!isPlanar(left.task)) {
    if (options.arm_model !== 'tool_point') {
      // The six-joint arm holds its tool's height and orientation with springs: it has no servo for a path's heights and turns yet.
      out.push({ code: 'sim.path_needs_tool_point', message: `--arm-model ${options.arm_model} cannot follow a task with task.path.waypoints_m (heights and turns) yet: the six-joint arm runs planar tasks only (task.start_m to task.goal_m at one height, no turn)`, where: { option: '--arm-model' }, hint: 'tool_point (the default) for a task with waypoints, with any orientations; six_joint for a planar task' });
    }
    // The tool point's wrist (yaw, pitch, roll hinges) loses a direction where the object's long axis is vertical.
    const near = closestToWristSingularity(left.task);
    if (near.angle < WRIST_SINGULARITY_MARGIN_RAD) {
      const deg = (r: number) => ((r * 180) / Math.PI).toFixed(1);
      out.push({
        code: 'sim.path_orientation_near_singularity',
        message: `task.path.orientations_xyzw: the object's long axis comes within ${deg(near.angle)} degrees of the vertical at s = ${near.s.toFixed(3)} m (between waypoints ${near.waypoint} and ${near.waypoint + 1}); the simulated wrist's yaw, pitch and roll hinges lose a direction when the long axis is vertical`,
        where: { key: 'task.path.orientations_xyzw' },
        hint: `orientations that keep the long axis (the object's y axis) at least ${deg(WRIST_SINGULARITY_MARGIN_RAD)} degrees from the vertical: a pitch within +-${deg(Math.PI / 2 - WRIST_SINGULARITY_MARGIN_RAD)} degrees; any yaw and roll`,
      });
    }
  }
  const rate = left.wrench_filter.sample_rate_hz;
  const every = 1 / (rate * options.timestep_s);
  if (Math.abs(every - Math.round(every)) > 1e-9 || Math.round(every) < 1) {
    out.push({ code: 'sim.rate_not_multiple', message: `wrench_filter.sample_rate_hz = ${rate} Hz is not the physics rate ${1 / options.timestep_s} Hz divided by a whole number`, where: { key: 'wrench_filter.sample_rate_hz' }, hint: `${1 / options.timestep_s} Hz, or that divided by 2, 4, 5, ...` });
  }
  return out;
}

/**
 * Where the path's interpolated orientation brings the object's long axis closest to the
 * vertical: the angle (rad), the arc length and the waypoint before it. Set-up only: every
 * waypoint and 64 points of each interval's slerp.
 */
export function closestToWristSingularity(task: TaskParams): { angle: number; s: number; waypoint: number } {
  const path = taskPath(task);
  let best = { angle: Math.PI / 2, s: 0, waypoint: 0 };
  if (!(task.path?.orientations_xyzw?.length)) return best;
  const ws = path.waypointS;
  for (let k = 0; k + 1 < path.n; k++) {
    for (let i = 0; i <= 64; i++) {
      const s = ws[k]! + ((ws[k + 1]! - ws[k]!) * i) / 64;
      path.orientationAt(s);
      const a = axisFromVertical(path.q);
      if (a < best.angle) best = { angle: a, s, waypoint: k };
    }
  }
  return best;
}

function taskForWorld(task: TaskParams, world: World): TaskParams {
  return { ...task, start_m: world.start_m, goal_m: world.goal_m };
}

const SIDES = ['left', 'right'] as const;

/** Run one episode. Loads MuJoCo on first use. */
export async function runEpisode(input: EpisodeInput): Promise<EpisodeResult> {
  const mj = await loadMujoco();
  return runEpisodeWith(mj, input);
}

export function runEpisodeWith(mj: MainModule, input: EpisodeInput): EpisodeResult {
  const o = simOptions(input.options);
  const problems = checkEpisodeSetup(input.left, o);
  if (problems.length) throw new InputError(problems);
  const nominal = input.left.task;
  const world = input.world ?? sampleWorld(nominal, o, input.seed);
  const task = taskForWorld(nominal, world);
  const applied = applyStrategy(input.strategy, { ...input.left, task }, { ...input.right, task });
  const cfg = { left: applied.left, right: applied.right };
  const rate = cfg.left.wrench_filter.sample_rate_hz;
  const every = Math.round(1 / (rate * o.timestep_s));
  const dt = o.timestep_s;
  const physicsHz = Math.round(1 / dt);
  const duration = input.duration_s ?? task.time_limit_s;
  const nSteps = Math.ceil(duration / dt - 1e-9);
  const zones = task.zones;
  const nz = zones.length;

  // Families: an obstacle for every zone occupied at some time, switched on and off by the changes.
  const changes = world.changes ?? [];
  const cellWorld = changes.some((c) => c.occupied) ? { ...world, occupied: world.occupied.map((occ, k) => occ || changes.some((c) => c.zone === k && c.occupied)) } : world;
  const cell = new SimCell(mj, nominal, cellWorld, o);
  if (cellWorld !== world) world.occupied.forEach((occ, k) => occ || cell.setObstacleActive(k, false));
  const nj = cell.jointCount;
  try {
    const arms = { left: new ArmStep(cfg.left, { jointCount: nj }), right: new ArmStep(cfg.right, { jointCount: nj }) };
    const feeds = { left: input.feed?.('left', arms.left) ?? arms.left, right: input.feed?.('right', arms.right) ?? arms.right };
    const sensors = {
      left: new SensorModel(world.sensors.left, o.sensor.noise_force_n, o.sensor.noise_torque_nm),
      right: new SensorModel(world.sensors.right, o.sensor.noise_force_n, o.sensor.noise_torque_nm),
    };
    // Which zones each arm's own area sensor physically sees (the real sensors, whatever the strategy).
    const sees = {
      left: zones.map((z) => z.observed_by === 'left' || z.observed_by === 'both'),
      right: zones.map((z) => z.observed_by === 'right' || z.observed_by === 'both'),
    };
    const truthState = world.occupied.map((occ) => (occ ? ZONE_OCCUPIED : ZONE_FREE));
    const half = zones.map((z) => (z.shape === 'box' ? z.size_m[0] / 2 : z.radius_m));
    const ownView = { left: new Uint8Array(nz).fill(ZONE_UNKNOWN), right: new Uint8Array(nz).fill(ZONE_UNKNOWN) };
    const fedView = { left: new Uint8Array(nz).fill(ZONE_UNKNOWN), right: new Uint8Array(nz).fill(ZONE_UNKNOWN) };
    const fromPartner = { left: new Uint8Array(nz).fill(ZONE_UNKNOWN), right: new Uint8Array(nz).fill(ZONE_UNKNOWN) };
    const nextZoneT = { left: 0, right: 0 };
    const zonePeriod = 1 / o.zone_sensor_rate_hz;
    const messages: ZoneMessage[] = [];
    let nextDelivery = 0;

    const rec = o.record
      ? new Recorder(
          zones.map((z) => z.name),
          { left: Array.from(arms.left.task.hidden, (k) => zones[k]!.name), right: Array.from(arms.right.task.hidden, (k) => zones[k]!.name) },
          { left: arms.left.hypotheses, right: arms.right.hypotheses },
          Math.min(Math.ceil(nSteps / every) + 1, 16384),
          nj,
        )
      : null;
    const ch = rec ? channelIndices(rec) : null;
    const measures = new EpisodeMeasures(arms.left, arms.right, world.occupied, 1 / rate, o.inject_hold);
    const timing = new BeliefTiming({ left: arms.left.task.hidden, right: arms.right.task.hidden }, world.occupied, 1 / rate);
    // Families: changes as they happen, knocks, an imperfect area sensor.
    const applied2: Array<{ zone: number; t_s: number; occupied: boolean }> = [];
    const pendingChange = new Uint8Array(changes.length);
    let nextChange = 0;
    const knocks = world.knocks ?? [];
    let knockActive = -1;
    let nextKnock = 0;
    const area = world.area_sensor;
    const areaRng = area ? { left: new Rng((area.seed ^ 0x6c) >>> 0), right: new Rng((area.seed ^ 0x72) >>> 0) } : null;
    const truthAt = (z: number, t: number): number => {
      let occ = world.occupied[z]!;
      for (const c of applied2) if (c.zone === z && c.t_s <= t) occ = c.occupied;
      return occ ? ZONE_OCCUPIED : ZONE_FREE;
    };
    const collisionTimes: number[] = [];
    // Correction-band disturbance: Ornstein-Uhlenbeck per wrist, force x and y, its own seeded stream
    // (derived from the sensor's noise seed, so the white noise is the same with and without it).
    const dist = o.disturbance_n;
    const ouA = Math.exp(-1 / (rate * DISTURBANCE_TAU_S));
    const ouB = dist * Math.sqrt(1 - ouA * ouA);
    const ou = { left: new Float64Array(2), right: new Float64Array(2) };
    const ouRng = { left: new Rng((world.sensors.left.noiseSeed ^ 0x6f75) >>> 0), right: new Rng((world.sensors.right.noiseSeed ^ 0x6f75) >>> 0) };

    // Scratch.
    const meas = { left: new Float64Array(6), right: new Float64Array(6) };
    const truthW = { left: new Float64Array(6), right: new Float64Array(6) };
    const jv = new Float64Array(nj);
    const pose = { left: new Float64Array(7), right: new Float64Array(7) };
    const fCell = { left: new Float64Array(3), right: new Float64Array(3) };
    // Commands: vx, vy (every task), vz and the wrist's yaw rate (a task with waypoints), its pitch and roll rates (a tilting path).
    const cmd = { left: new Float64Array(6), right: new Float64Array(6) };
    const wrist = new Float64Array(3);
    const rates = new Float64Array(3);
    const toolY = new Float64Array(3);
    const axis = new Float64Array(3);
    const beam = new Float64Array(7);
    const beamV = new Float64Array(6);

    // Outcome tracking.
    let endReason: EndReason = 'time_limit';
    let timeToGoal: number | null = null;
    const inContact = new Uint8Array(nz);
    const lastContactEnd = new Float64Array(nz).fill(Number.NEGATIVE_INFINITY);
    const perZone = new Int32Array(nz);
    let collisions = 0;
    let firstCollision: number | null = null;
    let contactSteps = 0;
    let peakInternal = 0;
    let sumInternal = 0;
    let nInternal = 0;
    const holdEvents: Array<{ arm: ArmSide; start_s: number; end_s: number | null; reasons: HoldReason[] }> = [];
    const openHold: Record<ArmSide, number> = { left: -1, right: -1 };
    const taredAt: Record<ArmSide, number | null> = { left: null, right: null };
    let anchorX = world.start_m[0];
    let anchorY = world.start_m[1];
    let anchorT = o.settle_s;
    let lastT = 0;
    let sampleIndex = 0;
    const tol = task.goal_tolerance_m;
    const [gx, gy] = world.goal_m;
    // A task with waypoints: the goal is the path's end in 3-D, the object a capsule, the zones solids.
    const path3d = cell.path;
    const tilt = cell.tilt;
    const poses = path3d ? pathPoses(nominal) : null;
    const gz = poses ? poses.end[2] : 0;
    let anchorZ = poses ? poses.start[2] : 0;
    const grasp = nominal.object.grasp_offset_m;
    const solids: Solid[] | null = path3d ? zones.map((z) => zoneSolid(z, false)) : null;
    const capsuleR = nominal.object.radius_m ?? o.beam_section_m / 2;
    /** Whether the beam (its capsule, with a 2 cm allowance) touches zone z now (a task with waypoints). */
    const beamNearZone3d = (z: number): boolean => {
      const hl = nominal.object.length_m / 2 + 0.02;
      cell.beamAxis(axis);
      return capsuleClearance(beam[0]! - hl * axis[0]!, beam[1]! - hl * axis[1]!, beam[2]! - hl * axis[2]!, beam[0]! + hl * axis[0]!, beam[1]! + hl * axis[1]!, beam[2]! + hl * axis[2]!, capsuleR, solids![z]!) <= 0.02;
    };

    const copyTrips = (a: Pick<ArmStep, 'watchdog'>): HoldReason[] => a.watchdog.trips.map((r, k) => ({ check: CHECKS[r.check] ?? String(r.check), input: r.input, value: r.value, limit: r.limit, t_s: r.t_s, first: a.watchdog.tripFirst(k) }));

    let step = 0;
    cell.beamPose(beam);
    zoneFed.left = zoneFed.right = 0;
    for (; step < nSteps; step++) {
      cell.step1();
      // Exactly step / rate: the value a replay recomputes from integer-nanosecond log times.
      const t = step / physicsHz;
      lastT = t;
      // Contacts of the current positions (collision detection runs in step1).
      const mask = cell.contactMask();
      if (mask !== 0) contactSteps++;
      for (let z = 0; z < nz; z++) {
        const c = (mask >>> z) & 1;
        if (c && !inContact[z]) {
          if (t - lastContactEnd[z]! >= o.contact_debounce_s) {
            collisions++;
            collisionTimes.push(t);
            perZone[z]!++;
            if (firstCollision === null) firstCollision = t;
          }
          inContact[z] = 1;
        } else if (!c && inContact[z]) {
          inContact[z] = 0;
          lastContactEnd[z] = t;
        } else if (c) {
          lastContactEnd[z] = t;
        }
      }

      if (step % every === 0) {
        if (changes.length && nextChange < changes.length) {
          // A change to occupied waits until the object is clear of the zone (a part is not set down on the beam).
          for (let c = nextChange; c < changes.length && changes[c]!.t_s <= t; c++) {
            if (pendingChange[c]) continue;
            const ch = changes[c]!;
            const zc = zones[ch.zone]!;
            if (ch.occupied && (path3d ? beamNearZone3d(ch.zone) : segmentHitsZone(beam[0]!, beam[1]! - nominal.object.length_m / 2 - 0.02, beam[1]! + nominal.object.length_m / 2 + 0.02, zc))) continue;
            pendingChange[c] = 1;
            truthState[ch.zone] = ch.occupied ? ZONE_OCCUPIED : ZONE_FREE;
            cell.setObstacleActive(ch.zone, ch.occupied);
            measures.zoneChanged(ch.zone, ch.occupied);
            timing.zoneChanged(ch.zone, ch.occupied);
            applied2.push({ zone: ch.zone, t_s: t, occupied: ch.occupied });
          }
          while (nextChange < changes.length && pendingChange[nextChange]) nextChange++;
        }
        if (knocks.length) {
          if (knockActive >= 0 && t >= knocks[knockActive]!.t_s + knocks[knockActive]!.duration_s) {
            cell.setBeamForce(0, 0, 0);
            knockActive = -1;
          }
          if (knockActive < 0 && nextKnock < knocks.length && t >= knocks[nextKnock]!.t_s) {
            const k = knocks[nextKnock]!;
            cell.setBeamForce(k.force_n * k.direction[0], k.force_n * k.direction[1], k.force_n * k.direction[2]);
            knockActive = nextKnock++;
          }
        }
        // Explicit baseline: send and deliver zone messages.
        if (applied.view === 'messages') {
          if (sampleIndex > 0 && sampleIndex % applied.messageEvery === 0) {
            for (const s of SIDES) {
              const states = Array.from(ownView[s], (v, z) => (sees[s][z] ? v : ZONE_UNKNOWN));
              messages.push({ from: s, sent_s: t, delivered_s: t + o.message_latency_s, states });
            }
          }
          while (nextDelivery < messages.length && messages[nextDelivery]!.delivered_s <= t + 1e-12) {
            const m = messages[nextDelivery++]!;
            const to = m.from === 'left' ? 'right' : 'left';
            for (let z = 0; z < nz; z++) if (m.states[z] !== ZONE_UNKNOWN) fromPartner[to][z] = m.states[z]!;
            nextZoneT[to] = Math.min(nextZoneT[to], t); // the node updates its view on receipt
          }
        }
        for (const s of SIDES) {
          const arm = feeds[s];
          cell.wrenchTruth(s, truthW[s]);
          sensors[s].measure(t, truthW[s], meas[s]);
          if (dist > 0 && taredAt[s] !== null) {
            const d = ou[s];
            const m = meas[s];
            for (let a = 0; a < 2; a++) {
              d[a] = ouA * d[a]! + ouB * ouRng[s].normal();
              m[a] = m[a]! + d[a]!;
            }
          }
          measures.wrench(s, t, meas[s]);
          cell.jointVelocities(s, jv);
          arm.setJointState(t, jv, nj);
          const p = pose[s];
          cell.toolPose(s, p);
          arm.setToolPose(t, p[0]!, p[1]!, p[2]!, p[3]!, p[4]!, p[5]!, p[6]!);
          if (t >= nextZoneT[s] - 1e-12) {
            nextZoneT[s] = t + zonePeriod;
            const view = fedView[s];
            for (let z = 0; z < nz; z++) {
              const inRange = Math.max(0, Math.abs(p[0]! - zones[z]!.center_m[0]) - half[z]!) <= o.zone_sensor_range_m;
              if (!(sees[s][z] && inRange)) ownView[s][z] = ZONE_UNKNOWN;
              else if (!areaRng) ownView[s][z] = truthState[z]!;
              else {
                let r = area!.latency_s > 0 ? truthAt(z, t - area!.latency_s) : truthState[z]!;
                const u = areaRng[s].uniform();
                if (r === ZONE_OCCUPIED && u < area!.miss_rate) r = ZONE_FREE;
                else if (r === ZONE_FREE && u < area!.false_alarm_rate) r = ZONE_OCCUPIED;
                ownView[s][z] = r;
              }
              if (sees[s][z]) timing.reading(s, z, ownView[s][z]!, t);
              if (applied.view === 'all') view[z] = truthState[z]!;
              else if (ownView[s][z] !== ZONE_UNKNOWN) view[z] = ownView[s][z]!;
              else if (applied.view === 'messages') view[z] = fromPartner[s][z]!;
              else view[z] = ZONE_UNKNOWN;
            }
            arm.setZoneView(t, view);
            zoneFed[s] = 1;
          }
          const out: ArmOutputs = arm.step(t, meas[s]);
          if (out.tared && taredAt[s] === null) taredAt[s] = t;
          const c = cmd[s];
          if (t < o.settle_s) {
            c[0] = 0;
            c[1] = 0;
            c[2] = 0;
            c[3] = 0;
            c[4] = 0;
            c[5] = 0;
          } else if (!path3d) {
            c[0] = out.twist[0]!;
            c[1] = out.twist[1]!;
          } else {
            // The motion stack moves the tool with the object's twist: v + w x r, r from the
            // object's centre to the grasp (the tool's y axis times the grasp offset), and turns
            // the wrist with the twist's yaw rate.
            const tw = out.twist;
            cell.toolAxisY(s, toolY);
            const rx = grasp * toolY[0]!, ry = grasp * toolY[1]!, rz = grasp * toolY[2]!;
            const wx = tw[3]!, wy = tw[4]!, wz = tw[5]!;
            c[0] = tw[0]! + wy * rz - wz * ry;
            c[1] = tw[1]! + wz * rx - wx * rz;
            c[2] = tw[2]! + wx * ry - wy * rx;
            if (tilt) {
              // The wrist's joint rates for w at its current angles (the chain's Euler-rate relation).
              cell.wristAngles(s, wrist);
              zxyRates(wrist[0]!, wrist[1]!, wx, wy, wz, rates);
              c[3] = rates[0]!;
              c[4] = rates[1]!;
              c[5] = rates[2]!;
            } else c[3] = wz;
          }
          if (input.commandOverride) input.commandOverride(t, s, c);
          if (path3d) {
            cell.setCommand3d(s, c[0]!, c[1]!, c[2]!, c[3]!);
            if (tilt) cell.setWristTiltRates(s, c[4]!, c[5]!);
          } else cell.setCommand(s, c[0]!, c[1]!);
          // Holds: the operator presses reset when the watchdog would release.
          if (out.held) {
            if (openHold[s] < 0) {
              openHold[s] = holdEvents.length;
              holdEvents.push({ arm: s, start_s: t, end_s: null, reasons: [] });
            }
            const ev = holdEvents[openHold[s]]!;
            if (o.auto_reset && arm.watchdog.readyToRelease) {
              const reasons = copyTrips(arm);
              if (arm.requestReset().released) {
                ev.reasons = reasons;
                ev.end_s = t;
                openHold[s] = -1;
              }
            } else if (o.hold_timeout_s > 0 && t - ev.start_s > o.hold_timeout_s) {
              endReason = 'hold';
            }
          }
          // Noise-free force on the arm in the cell frame.
          const w = truthW[s];
          cell.toCell(s, w[0]!, w[1]!, w[2]!, fCell[s]);
        }
        cell.beamAxis(axis);
        const fl = fCell.left, fr = fCell.right;
        const internal = 0.5 * (fl[0]! * axis[0]! + fl[1]! * axis[1]! + fl[2]! * axis[2]! - (fr[0]! * axis[0]! + fr[1]! * axis[1]! + fr[2]! * axis[2]!));
        if (t >= o.settle_s) {
          const a = Math.abs(internal);
          if (a > peakInternal) peakInternal = a;
          sumInternal += a;
          nInternal++;
        }
        cell.beamPose(beam);
        cell.beamVelocity(beamV);
        measures.sample(t, arms.left.out, arms.right.out, beam[0]!, beam[1]!);
        timing.sample(t, arms.left.out.hiddenOccupied, arms.right.out.hiddenOccupied);
        if (rec && ch) record(rec, ch, t, arms, meas, truthW, fCell, pose, fedView, cmd, cell, beam, beamV, internal, mask);
        sampleIndex++;
        // Success, stall.
        const bx = beam[0]!, by = beam[1]!, bz = beam[2]!;
        if (t >= o.settle_s) {
          const atGoal = path3d
            ? Math.hypot(bx - gx, by - gy, bz - gz) <= tol && Math.hypot(beamV[0]!, beamV[1]!, beamV[2]!) < o.success_speed_m_s
            : Math.hypot(bx - gx, by - gy) <= tol && Math.hypot(beamV[0]!, beamV[1]!) < o.success_speed_m_s;
          if (atGoal) {
            endReason = 'success';
            timeToGoal = t;
          } else if (path3d ? Math.hypot(bx - anchorX, by - anchorY, bz - anchorZ) > 0.005 : Math.hypot(bx - anchorX, by - anchorY) > 0.005) {
            anchorX = bx;
            anchorY = by;
            anchorZ = bz;
            anchorT = t;
          } else if (o.stall_s > 0 && t - anchorT > o.stall_s) {
            endReason = 'stall';
          }
        }
        if (endReason !== 'time_limit') break;
      }
      cell.control();
      cell.step2();
    }
    // Holds still open at the end keep their reasons so far.
    for (const s of SIDES) if (openHold[s] >= 0) holdEvents[openHold[s]]!.reasons = copyTrips(arms[s]);
    cell.beamPose(beam);
    const reasons: Record<string, number> = {};
    for (const e of holdEvents) for (const r of e.reasons) reasons[r.check] = (reasons[r.check] ?? 0) + 1;
    const perZoneRec: Record<string, number> = {};
    const occupiedRec: Record<string, boolean> = {};
    zones.forEach((z, k) => {
      perZoneRec[z.name] = perZone[k]!;
      occupiedRec[z.name] = world.occupied[k]!;
    });
    const m = measures.finish();
    const bt = timing.finish();
    const falseImpact = countFalseImpactHolds(holdEvents, knocks, collisionTimes);
    const zoneSummaries: WorldZoneSummary[] = zones.map((z, k) => ({
      name: z.name,
      shape: z.shape,
      kind: z.kind,
      center_m: [z.center_m[0], z.center_m[1]],
      size_m: z.shape === 'box' ? [z.size_m[0], z.size_m[1]] : null,
      radius_m: z.shape === 'box' ? null : z.radius_m,
      observed_by: z.observed_by,
      occupied: world.occupied[k]!,
      changes: applied2.filter((c) => c.zone === k).map((c) => ({ t_s: c.t_s, occupied: c.occupied })),
    }));
    const summary: EpisodeSummary = {
      seed: input.seed,
      strategy: strategyLabel(input.strategy, input.left.wrench_filter.sample_rate_hz),
      k: input.strategy.k,
      arm_model: o.arm_model,
      world: { occupied: occupiedRec, start_m: [world.start_m[0], world.start_m[1]], goal_m: [world.goal_m[0], world.goal_m[1]], zones: zoneSummaries, knocks: knocks.map((k) => ({ ...k, direction: [k.direction[0], k.direction[1], k.direction[2]] })) },
      family: input.family ? { name: input.family.name, redraws: input.family.redraws } : null,
      success: endReason === 'success',
      end_reason: endReason,
      duration_s: lastT,
      time_to_goal_s: timeToGoal,
      final_position_m: [beam[0]!, beam[1]!],
      final_distance_m: path3d ? Math.hypot(beam[0]! - gx, beam[1]! - gy, beam[2]! - gz) : Math.hypot(beam[0]! - gx, beam[1]! - gy),
      collisions: { count: collisions, first_s: firstCollision, per_zone: perZoneRec, contact_s: contactSteps * dt },
      internal_force: { peak_n: peakInternal, mean_abs_n: nInternal > 0 ? sumInternal / nInternal : 0 },
      holds: { count: holdEvents.length, reasons, events: holdEvents, false_impact: falseImpact },
      role_switches: { left: arms.left.roles.switches, right: arms.right.roles.switches },
      tared_at_s: { left: taredAt.left, right: taredAt.right },
      samples: sampleIndex,
      belief: { calibration: m.calibration, ...beliefTimingSummary([bt]) },
      commitments: m.commitments,
      same_role: m.same_role,
      partner_hold: m.partner_hold,
      disturbance_n: dist,
    };
    return { summary, configs: cfg, record: rec ? rec.finish(rate, messages) : null, world, xml: cell.xml, measures: m, beliefTiming: bt };
  } finally {
    cell.dispose();
  }
}

interface ArmChannels {
  wrench: number; wrenchTrue: number; forceCell: number; jointPosition: number; jointVelocity: number; toolPose: number; zoneView: number; zoneFed: number;
  twist: number; command: number; role: number; slot: number; held: number; inhibited: number; tared: number; impactFlag: number;
  beliefUpdated: number; impactScore: number; correction: number; impact: number; belief: number; hiddenOccupied: number; entropy: number; objectEstimate: number;
}
interface Channels {
  t: number;
  left: ArmChannels;
  right: ArmChannels;
  beamPose: number;
  beamVelocity: number;
  internal: number;
  contacts: number;
}

function channelIndices(r: Recorder): Channels {
  const arm = (s: ArmSide): ArmChannels => {
    const i = (k: string) => r.index(`${s}.${k}`);
    return {
      wrench: i('wrench'), wrenchTrue: i('wrenchTrue'), forceCell: i('forceCell'), jointPosition: i('jointPosition'), jointVelocity: i('jointVelocity'),
      toolPose: i('toolPose'), zoneView: i('zoneView'), zoneFed: i('zoneFed'), twist: i('twist'), command: i('command'), role: i('role'), slot: i('slot'), held: i('held'),
      inhibited: i('inhibited'), tared: i('tared'), impactFlag: i('impactFlag'), beliefUpdated: i('beliefUpdated'), impactScore: i('impactScore'),
      correction: i('correction'), impact: i('impact'), belief: i('belief'), hiddenOccupied: i('hiddenOccupied'), entropy: i('entropy'), objectEstimate: i('objectEstimate'),
    };
  };
  return { t: r.index('t'), left: arm('left'), right: arm('right'), beamPose: r.index('beam.pose'), beamVelocity: r.index('beam.velocity'), internal: r.index('internal_force'), contacts: r.index('contacts') };
}

function put(r: Recorder, ch: number, src: ArrayLike<number>, n = src.length): void {
  const a = r.array(ch);
  const b = r.base(ch);
  for (let k = 0; k < n; k++) a[b + k] = src[k]!;
}
function put1(r: Recorder, ch: number, v: number): void {
  r.array(ch)[r.base(ch)] = v;
}

const jpScratch = new Float64Array(8);
/** 1 when the arm's zone view was fed at the current sample (recorded, then cleared). */
const zoneFed: Record<ArmSide, number> = { left: 0, right: 0 };
const jvScratch = new Float64Array(8);
const objScratch = new Float64Array(2);

function record(
  r: Recorder,
  ch: Channels,
  t: number,
  arms: Record<ArmSide, ArmStep>,
  meas: Record<ArmSide, Float64Array>,
  truthW: Record<ArmSide, Float64Array>,
  fCell: Record<ArmSide, Float64Array>,
  pose: Record<ArmSide, Float64Array>,
  view: Record<ArmSide, Uint8Array>,
  cmd: Record<ArmSide, Float64Array>,
  cell: SimCell,
  beam: Float64Array,
  beamV: Float64Array,
  internal: number,
  mask: number,
): void {
  r.begin();
  put1(r, ch.t, t);
  for (const s of SIDES) {
    const c = ch[s];
    const out = arms[s].out;
    put(r, c.wrench, meas[s]);
    put(r, c.wrenchTrue, truthW[s]);
    put(r, c.forceCell, fCell[s]);
    cell.jointPositions(s, jpScratch);
    cell.jointVelocities(s, jvScratch);
    put(r, c.jointPosition, jpScratch, cell.jointCount);
    put(r, c.jointVelocity, jvScratch, cell.jointCount);
    put(r, c.toolPose, pose[s]);
    put(r, c.zoneView, view[s]);
    put1(r, c.zoneFed, zoneFed[s]);
    zoneFed[s] = 0;
    put(r, c.twist, out.twist);
    put(r, c.command, cmd[s], 2);
    put1(r, c.role, out.role);
    put1(r, c.slot, out.slot);
    put1(r, c.held, out.held ? 1 : 0);
    put1(r, c.inhibited, out.inhibited ? 1 : 0);
    put1(r, c.tared, out.tared ? 1 : 0);
    put1(r, c.impactFlag, out.impactFlag ? 1 : 0);
    put1(r, c.beliefUpdated, out.beliefUpdated ? 1 : 0);
    put1(r, c.impactScore, out.impactScore);
    put(r, c.correction, out.correction, 6);
    put(r, c.impact, out.impact, 6);
    put(r, c.belief, out.belief);
    put(r, c.hiddenOccupied, out.hiddenOccupied);
    put1(r, c.entropy, out.entropy_nats);
    objScratch[0] = out.objectX;
    objScratch[1] = out.objectY;
    put(r, c.objectEstimate, objScratch);
  }
  put(r, ch.beamPose, beam);
  put(r, ch.beamVelocity, beamV);
  put1(r, ch.internal, internal);
  put1(r, ch.contacts, mask >>> 0);
  r.end();
}
