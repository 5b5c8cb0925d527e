/**
 * Topic names and types of one arm's antiphon instance, shared by the live node, bag replay
 * and the simulated cell, so that a replayed or simulated bag looks like a recorded live one.
 *
 * Inputs live in the arm's namespace (`/left/wrench`), as an arm driver publishes them;
 * outputs under `<ns>/antiphon/` (the node's private namespace). Remap inputs as ROS does:
 * `from:=to` reads the input named `from` from topic `to`.
 */
import type { ArmName } from '../params/spec.js';

export const INPUT_KINDS = ['wrench', 'joint_states', 'tool_pose', 'zone_view'] as const;
export type InputKind = (typeof INPUT_KINDS)[number];

export const OUTPUT_KINDS = ['role', 'belief', 'correction_wrench', 'impact_wrench', 'recommended_twist', 'watchdog'] as const;
export type OutputKind = (typeof OUTPUT_KINDS)[number];

export const INPUT_TYPES: { readonly [K in InputKind]: string } = {
  wrench: 'geometry_msgs/msg/WrenchStamped',
  joint_states: 'sensor_msgs/msg/JointState',
  tool_pose: 'geometry_msgs/msg/PoseStamped',
  zone_view: 'antiphon/msg/ZoneView',
};

export const OUTPUT_TYPES: { readonly [K in OutputKind]: string } = {
  role: 'antiphon/msg/RoleState',
  belief: 'antiphon/msg/Belief',
  correction_wrench: 'geometry_msgs/msg/WrenchStamped',
  impact_wrench: 'geometry_msgs/msg/WrenchStamped',
  recommended_twist: 'geometry_msgs/msg/TwistStamped',
  watchdog: 'antiphon/msg/WatchdogStatus',
};

export function inputTopic(arm: ArmName, kind: InputKind): string {
  return `/${arm}/${kind}`;
}

export function outputTopic(arm: ArmName, kind: OutputKind): string {
  return `/${arm}/antiphon/${kind}`;
}

/** Frame ids (REP 105 style names): the cell frame for twists, the sensor frame for wrenches. */
export const CELL_FRAME = 'cell';
export function sensorFrame(arm: ArmName): string {
  return `${arm}_ft_sensor`;
}

/** Parse `from:=to` remappings; returns the map or a list of the malformed ones. */
export function parseRemaps(list: readonly string[]): { map: Map<string, string>; bad: string[] } {
  const map = new Map<string, string>();
  const bad: string[] = [];
  for (const r of list) {
    const m = /^([^:=\s]+):=([^:=\s]+)$/.exec(r);
    if (!m) bad.push(r);
    else map.set(m[1]!, m[2]!);
  }
  return { map, bad };
}
