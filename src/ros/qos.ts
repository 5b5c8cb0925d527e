/**
 * QoS of every topic antiphon uses, as plain values, and the request-offered compatibility
 * rule DDS applies when it matches a subscription to a publisher.
 *
 * Common practice (DDS 1.4, 2.2.3 "Supported QoS", RxO = yes for RELIABILITY and DURABILITY):
 * a subscription requesting reliable does not match a best-effort publisher, and one requesting
 * transient local does not match a volatile publisher; every other pairing matches. History and
 * depth are local to each side.
 */
import type { ArmConfig } from '../params/config.js';
import type { ResolvedValue } from '../params/spec.js';

export type Reliability = 'reliable' | 'best_effort';
export type Durability = 'volatile' | 'transient_local';

export interface QosProfile {
  readonly reliability: Reliability;
  readonly durability: Durability;
  readonly history: 'keep_last';
  readonly depth: number;
}

export const qos = (reliability: Reliability, depth: number, durability: Durability = 'volatile'): QosProfile => ({ reliability, durability, history: 'keep_last', depth });

/** Why a subscription requesting `sub` does not match a publisher offering `pub`, or undefined when it does. */
export function incompatibility(pub: QosProfile, sub: QosProfile): string | undefined {
  const why: string[] = [];
  if (sub.reliability === 'reliable' && pub.reliability === 'best_effort') why.push('RELIABILITY (reliable requested, best effort offered)');
  if (sub.durability === 'transient_local' && pub.durability === 'volatile') why.push('DURABILITY (transient local requested, volatile offered)');
  return why.length ? why.join(', ') : undefined;
}

/** rmw enum values (rclnodejs QoS.*Policy; ambient enums in its declarations). */
export const RMW = {
  history: { keep_last: 1 },
  reliability: { reliable: 1, best_effort: 2 },
  durability: { transient_local: 1, volatile: 2 },
} as const;

/** The profile from an rmw endpoint-info QoS object (rclnodejs getPublishersInfoByTopic), or undefined when unreadable. */
export function fromRmw(q: unknown): QosProfile | undefined {
  if (typeof q !== 'object' || q === null) return undefined;
  const o = q as Record<string, unknown>;
  const rel = Number(typeof o['reliability'] === 'function' ? (o['reliability'] as () => unknown).call(o) : o['reliability']);
  const dur = Number(o['durability']);
  const reliability: Reliability | undefined = rel === 1 ? 'reliable' : rel === 2 ? 'best_effort' : undefined;
  const durability: Durability | undefined = dur === 1 ? 'transient_local' : dur === 2 ? 'volatile' : undefined;
  if (!reliability || !durability) return undefined;
  return qos(reliability, Number(o['depth'] ?? 0) || 1, durability);
}

/** The QoS of every endpoint of one arm, from its parameters (the defaults are documented in README). */
export interface ArmQos {
  /**
   * Inputs: best effort requested matches a best-effort driver or bag (our bags record the
   * inputs best effort) and a reliable one alike; depth from ros.input_queue_depth.
   */
  readonly input: QosProfile;
  /** The recommended twist: reliable, so a default (reliable) subscriber on the arm side matches. */
  readonly twist: QosProfile;
  readonly status: QosProfile;
  readonly wrenches: QosProfile;
  /** antiphon/held: reliable and transient local, so a late partner sees the current bit. */
  readonly held: QosProfile;
  readonly diagnostics: QosProfile;
}

export function armQos(values: ReadonlyMap<string, ResolvedValue>): ArmQos {
  const get = <T>(k: string, d: T) => (values.get(k)?.value as T | undefined) ?? d;
  return {
    input: qos('best_effort', get('ros.input_queue_depth', 100)),
    twist: qos('reliable', 10),
    status: qos(get<Reliability>('ros.qos.status.reliability', 'reliable'), get('ros.qos.status.depth', 10)),
    wrenches: qos(get<Reliability>('ros.qos.wrenches.reliability', 'reliable'), get('ros.qos.wrenches.depth', 10)),
    held: qos('reliable', 1, 'transient_local'),
    diagnostics: qos('reliable', 10),
  };
}

export type { ArmConfig };
