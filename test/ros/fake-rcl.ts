/** An in-memory stand-in for the rclnodejs slice in src/ros/rcl.ts (tests only). */
import type { RclModule, RclNode, RclPublisher, RclSetParametersResult, RclTriggerResponse } from '../../src/ros/rcl.js';

export class FakeNode implements RclNode {
  clockNs = 0n;
  readonly subs = new Map<string, { type: string; options: { qos?: string | object; isRaw?: boolean }; cb: (m: Buffer) => void }>();
  readonly pubs = new Map<string, { type: string; sent: (object | Buffer)[] }>();
  readonly services = new Map<string, (req: object, res: RclTriggerResponse) => void>();
  readonly timers: { period: bigint; cb: () => void }[] = [];
  readonly params: { p: { name: string; type: number; value: unknown }; d: { readOnly?: boolean; description?: string } }[] = [];
  readonly logs: string[] = [];
  private setCb?: (ps: object[]) => RclSetParametersResult;
  constructor(readonly nodeName: string, readonly ns = '') {}
  createSubscription(type: string, topic: string, options: { qos?: string | object; isRaw?: boolean }, cb: (m: Buffer) => void) {
    this.subs.set(topic, { type, options, cb });
    return {};
  }
  createPublisher(type: string, topic: string): RclPublisher {
    const rec = { type, sent: [] as (object | Buffer)[] };
    this.pubs.set(topic, rec);
    return { publish: (m) => void rec.sent.push(Buffer.isBuffer(m) ? Buffer.from(m) : m) };
  }
  createService(_type: string, name: string, cb: (req: object, res: RclTriggerResponse) => void) {
    this.services.set(name, cb);
    return {};
  }
  createTimer(period: bigint, cb: () => void) {
    this.timers.push({ period, cb });
    return {};
  }
  now() {
    return { nanoseconds: this.clockNs };
  }
  getLogger() {
    return { info: (m: string) => this.logs.push(`info ${m}`), warn: (m: string) => this.logs.push(`warn ${m}`), error: (m: string) => this.logs.push(`error ${m}`) };
  }
  declareParameter(p: object, d?: object) {
    this.params.push({ p: p as never, d: (d ?? {}) as never });
    return p;
  }
  addOnSetParametersCallback(cb: (ps: object[]) => RclSetParametersResult) {
    this.setCb = cb;
  }
  trySet(ps: object[]): RclSetParametersResult | undefined {
    return this.setCb?.(ps);
  }
  call(service: string): { success: boolean; message: string } {
    let out = { success: false, message: 'no reply' };
    this.services.get(service)!({}, { send: (r) => (out = r) });
    return out;
  }
  spin() {}
  destroy() {}
  name() {
    return this.nodeName;
  }
  namespace() {
    return this.ns;
  }
}

export const fakeRcl: RclModule = {
  init: async () => {},
  Node: FakeNode,
  QoS: { profileSensorData: 'qos_profile_sensor_data', profileDefault: 'qos_profile_default', profileSystemDefault: 'qos_profile_system_default' },
  Parameter: class {
    constructor(readonly name: string, readonly type: number, readonly value?: unknown) {}
  },
  ParameterDescriptor: class {
    constructor(readonly name: string, readonly type: number, readonly description?: string, readonly readOnly?: boolean) {}
  },
  removeROSArgs: (a) => a,
  shutdown: () => {},
};
