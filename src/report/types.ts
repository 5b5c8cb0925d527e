/**
 * What the HTML report draws. Replay and the simulated cell each adapt their records to this
 * shape; the report knows nothing of bags or physics. Every series is full rate (for example
 * an hour of 1 kHz data); the report decimates for display with min/max envelopes and never
 * drops events.
 */

export interface ReportSeries {
  /** Sample times, s on the shared clock. */
  readonly t: Float64Array;
  /** One value per sample. */
  readonly y: Float64Array;
}

export interface ReportEvent {
  readonly t_s: number;
  /** `hold`, `trip`, `release`, `impact`, `role`, `collision`, `tare`, `note`. */
  readonly kind: string;
  readonly text: string;
}

export interface ReportArm {
  /** `left` or `right`. */
  readonly name: string;
  /** Force magnitudes (N): tared wrench, correction band, impact band. */
  readonly rawForce: ReportSeries;
  readonly correctionForce: ReportSeries;
  readonly impactForce: ReportSeries;
  /** Role per sample: 0 speaker, 1 listener (same t as rawForce is not required). */
  readonly role: ReportSeries;
  /** 1 while the watchdog holds, else 0. */
  readonly held: ReportSeries;
  /** Recommended linear speed and measured tool speed, m/s. */
  readonly recommendedSpeed: ReportSeries;
  readonly measuredSpeed: ReportSeries;
  /** Names of the zones only the partner observes, and per zone its occupied probability over time. */
  readonly hiddenZones: readonly string[];
  readonly beliefT: Float64Array;
  /** Row-major: beliefT.length rows, hiddenZones.length columns. */
  readonly beliefMarginals: Float64Array;
  readonly events: readonly ReportEvent[];
}

export interface ReportInput {
  readonly title: string;
  /** What produced it, e.g. `replay of bags/run3 with config/demo_cell.yaml`. */
  readonly subtitle: string;
  /** Summary table rows: label and value, already formatted. */
  readonly summary: readonly (readonly [string, string])[];
  readonly arms: readonly ReportArm[];
  /** Opposing force between the arms along the object, N (when both arms are known). */
  readonly internalForce?: ReportSeries;
  /** Reliability diagram of the belief, when the truth is known (simulated cell). */
  readonly calibration?: ReportCalibration;
  /** The cell from above (simulated cell): zones, paths, collisions; drawn with a time slider. */
  readonly plan?: ReportPlan;
  /** Expectation verdicts, when checks ran. */
  readonly checks?: readonly { readonly name: string; readonly expected?: string; readonly measured: string; readonly verdict: 'pass' | 'fail' }[];
}

/** One bin of a reliability diagram: predicted probability in [lo, hi). */
export interface ReportReliabilityBin {
  readonly lo: number;
  readonly hi: number;
  readonly count: number;
  /** Mean predicted probability in the bin; null when empty. */
  readonly mean_predicted: number | null;
  /** Observed frequency of the event in the bin; null when empty. */
  readonly observed_frequency: number | null;
}

/** Calibration of a belief against the truth (the simulated cell knows the truth). */
export interface ReportCalibration {
  /** What the pairs are, e.g. `listener belief updates of both arms, every hidden zone`. */
  readonly what: string;
  readonly updates: number;
  readonly ece: number | null;
  readonly p_truth_below_0_05_rate: number | null;
  readonly bins: readonly ReportReliabilityBin[];
}

/** A zone of the plan view with its true state over time. */
export interface ReportPlanZone {
  readonly name: string;
  readonly shape: string;
  readonly center_m: readonly [number, number];
  readonly size_m: readonly [number, number] | null;
  readonly radius_m: number | null;
  readonly observed_by: string;
  /** A task with waypoints: the box's turn about the vertical (rad), heights [bottom, top] (box, cylinder) or the sphere's centre height (m). */
  readonly yaw_rad?: number;
  readonly height_m?: readonly [number, number] | null;
  readonly center_z_m?: number | null;
  /** At the start, then each change. */
  readonly occupied: boolean;
  readonly changes: readonly { readonly t_s: number; readonly occupied: boolean }[];
}

/** The plan view's inputs: full-rate series on one clock (the report decimates them). */
export interface ReportPlan {
  readonly zones: readonly ReportPlanZone[];
  readonly object_length_m: number;
  readonly start_m: readonly [number, number];
  readonly goal_m: readonly [number, number];
  readonly t: Float64Array;
  /** Object centre and heading (rad about z; the object lies along its own y axis). */
  readonly objectX: Float64Array;
  readonly objectY: Float64Array;
  readonly objectYaw: Float64Array;
  /** Grasp points (tool positions) of both arms. */
  readonly leftX: Float64Array;
  readonly leftY: Float64Array;
  readonly rightX: Float64Array;
  readonly rightY: Float64Array;
  /** Contact onsets: time, object centre then, zone. */
  readonly collisions: readonly { readonly t_s: number; readonly x: number; readonly y: number; readonly zone: string }[];
  /** A task with waypoints: the side view's heights (same clock) and the nominal path (x, z, a point every few cm). */
  readonly side?: ReportSide;
}

/** The side view (x against height) of a task with waypoints. */
export interface ReportSide {
  readonly objectZ: Float64Array;
  readonly leftZ: Float64Array;
  readonly rightZ: Float64Array;
  readonly pathX: readonly number[];
  readonly pathZ: readonly number[];
  /** The object's capsule radius, m. */
  readonly radius_m: number;
}
