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

/**
 * The QoS each output is offered with by the live node with default parameters, as rosbag2
 * records it in `offered_qos_profiles` (rmw enum values: history 1 keep last, reliability
 * 1 reliable / 2 best effort, durability 1 transient local / 2 volatile, liveliness 1
 * automatic). Bags that record outputs (replay --out, simulate --out) write these, so that
 * `ros2 bag play` offers what the live node offers.
 */
const RELIABLE_10 = [{ history: 1, depth: 10, reliability: 1, durability: 2, deadline: { sec: 0, nsec: 0 }, lifespan: { sec: 0, nsec: 0 }, liveliness: 1, liveliness_lease_duration: { sec: 0, nsec: 0 }, avoid_ros_namespace_conventions: false }] as const;
export const OUTPUT_BAG_QOS: { readonly [K in OutputKind]: typeof RELIABLE_10 } = {
  role: RELIABLE_10,
  belief: RELIABLE_10,
  correction_wrench: RELIABLE_10,
  impact_wrench: RELIABLE_10,
  recommended_twist: RELIABLE_10,
  watchdog: RELIABLE_10,
};
