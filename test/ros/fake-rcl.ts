/**
 * The test stand-in for rclnodejs: the recording stand-in of `node --dry-run`
 * (src/ros/recorder.ts: names, QoS, parameters with descriptors and callbacks, the lifecycle
 * state machine) plus an in-memory graph that delivers each published message to every
 * subscription on the same topic whose QoS matches the publisher's as DDS matches them
 * (a reliable subscription does not match a best-effort publisher; transient local does not
 * match volatile), and reports the others as incompatible.
 */
import { incompatibility, RMW } from '../../src/ros/qos.js';
import type { RclTriggerResponse } from '../../src/ros/rcl.js';
import { RecordingNode, RecordingRcl, type RecordedEndpoint, type RecordedPublisher, type RecordedSubscription } from '../../src/ros/recorder.js';

export class FakeRcl extends RecordingRcl {
  readonly incompatible: { topic: string; why: string }[] = [];
  private readonly subsByTopic = new Map<string, RecordedSubscription[]>();
  private readonly pubsByTopic = new Map<string, RecordedPublisher[]>();
  private readonly nodeOf = new Map<RecordedEndpoint, RecordingNode>();
  clockNs = 0n;

  override onEndpoint(node: RecordingNode, kind: 'subscription' | 'publication', e: RecordedEndpoint): void {
    this.nodeOf.set(e, node);
    if (kind === 'subscription') {
      const s = e as RecordedSubscription;
      (this.subsByTopic.get(s.topic) ?? this.subsByTopic.set(s.topic, []).get(s.topic)!).push(s);
      for (const p of this.pubsByTopic.get(s.topic) ?? []) this.match(p, s);
    } else {
      const p = e as RecordedPublisher;
      (this.pubsByTopic.get(p.topic) ?? this.pubsByTopic.set(p.topic, []).get(p.topic)!).push(p);
      for (const s of this.subsByTopic.get(p.topic) ?? []) this.match(p, s);
    }
  }

  private match(p: RecordedPublisher, s: RecordedSubscription): boolean {
    const why = incompatibility(p.qos, s.qos);
    if (why && !this.incompatible.some((x) => x.topic === p.topic && x.why === why)) this.incompatible.push({ topic: p.topic, why });
    return why === undefined && p.type === s.type;
  }

  override onPublish(p: RecordedPublisher, m: object | Buffer): void {
    super.onPublish(p, m);
    for (const s of this.subsByTopic.get(p.topic) ?? []) {
      if (s.destroyed || !this.match(p, s)) continue;
      if (s.raw && !Buffer.isBuffer(m)) continue; // the stand-in has no CDR writer for plain objects
      s.callback((Buffer.isBuffer(m) ? Buffer.from(m) : m) as Buffer);
    }
  }

  override endpointsInfo(topic: string, kind: 'subscription' | 'publication'): object[] {
    const list = kind === 'publication' ? this.pubsByTopic.get(topic) ?? [] : this.subsByTopic.get(topic) ?? [];
    return list.filter((e) => !e.destroyed).map((e) => ({
      node_name: this.nodeOf.get(e)?.nodeName,
      // As rclnodejs 2.2.0 builds TopicEndpointInfo (src/rcl_utilities.cpp ConvertToJSTopicEndpoint): qos_profile.
      qos_profile: { reliability: RMW.reliability[e.qos.reliability], durability: RMW.durability[e.qos.durability], depth: e.qos.depth, history: 1 },
    }));
  }

  /** Every node of the module on one shared clock. */
  setClock(ns: bigint): void {
    this.clockNs = ns;
    for (const n of this.nodes) n.clockNs = ns;
  }

  node(name: string): RecordingNode {
    const n = this.nodes.find((x) => x.nodeName === name && !x.destroyed);
    if (!n) throw new Error(`no node ${name}`);
    return n;
  }

  /** Call a Trigger service; the reply may come later (from a later sample). */
  call(service: string): { reply?: { success: boolean; message: string } } {
    for (const n of this.nodes) {
      const s = n.services.find((x) => x.name === service && !x.destroyed);
      if (!s) continue;
      const out: { reply?: { success: boolean; message: string } } = {};
      const res: RclTriggerResponse = { send: (r) => void (out.reply = r) };
      s.callback({}, res);
      return out;
    }
    throw new Error(`no service ${service}`);
  }

  /** Fire every live timer of every node once. */
  tick(): void {
    for (const n of this.nodes) for (const t of n.timers) if (!t.destroyed) t.callback();
  }

  /** Fire only timers with the given period. */
  tickPeriod(period: bigint): void {
    for (const n of this.nodes) for (const t of n.timers) if (!t.destroyed && t.period === period) t.callback();
  }

  topic(name: string): RecordedPublisher {
    for (const n of this.nodes) {
      const p = n.publications.find((x) => x.topic === name && !x.destroyed);
      if (p) return p;
    }
    throw new Error(`nobody publishes ${name}`);
  }

  sent(name: string): (object | Buffer)[] {
    return this.nodes.flatMap((n) => n.publications.filter((p) => p.topic === name)).flatMap((p) => p.sent);
  }
}
