/**
 * A recording stand-in for the rclnodejs slice in rcl.ts. `antiphon node --dry-run` runs the
 * node's own construction code (src/ros/arm-nodes.ts) against it and prints what it recorded,
 * so the printed ROS graph cannot drift from what the live node creates. The test stand-in
 * (test/ros/fake-rcl.ts) builds on it with delivery and DDS-style QoS matching.
 *
 * It resolves names as rcl does for the cases antiphon uses (absolute, relative to the
 * namespace, `~/` private) and applies `from:=to` remappings of resolved names.
 */
import { qos as profile, RMW, type QosProfile } from './qos.js';
import {
  STATE,
  type RclLifecycleNode,
  type RclModule,
  type RclNode,
  type RclNodeOptions,
  type RclParameterValue,
  type RclPublisher,
  type RclSetParametersResult,
  type RclState,
  type RclSubscriptionOptions,
  type RclTime,
  type RclTriggerResponse,
} from './rcl.js';

/** The QoS profiles rclnodejs names (rmw's qos_profile_sensor_data and qos_profile_default). */
export const NAMED_PROFILES: Readonly<Record<string, QosProfile>> = {
  qos_profile_sensor_data: profile('best_effort', 5),
  qos_profile_default: profile('reliable', 10),
  qos_profile_system_default: profile('reliable', 10),
};

export class RecordedQoS {
  constructor(
    readonly history = 1,
    readonly depth = 10,
    readonly reliabilityPolicy = 1,
    readonly durability = 2,
  ) {}
  get profile(): QosProfile {
    return profile(this.reliabilityPolicy === RMW.reliability.best_effort ? 'best_effort' : 'reliable', this.depth, this.durability === RMW.durability.transient_local ? 'transient_local' : 'volatile');
  }
}

export function profileOf(q: string | object | undefined): QosProfile {
  if (q === undefined) return NAMED_PROFILES['qos_profile_default']!;
  if (typeof q === 'string') {
    const p = NAMED_PROFILES[q];
    if (!p) throw new Error(`unknown QoS profile name ${q}`);
    return p;
  }
  if (q instanceof RecordedQoS) return q.profile;
  throw new Error('a QoS that is neither a profile name nor a QoS object');
}

export class RecordedParameter {
  constructor(
    readonly name: string,
    readonly type: number,
    public value: unknown = undefined,
  ) {}
}
export class RecordedDescriptor {
  constructor(
    readonly name: string,
    readonly type: number,
    readonly description = '',
    readonly readOnly = false,
    readonly range?: object,
  ) {}
}
export class RecordedRange {
  constructor(
    readonly from: number | bigint,
    readonly to: number | bigint,
    readonly step: number | bigint = 1,
    readonly tolerance?: number,
  ) {}
}

export interface RecordedEndpoint {
  readonly topic: string;
  readonly type: string;
  readonly qos: QosProfile;
}
export interface RecordedSubscription extends RecordedEndpoint {
  readonly raw: boolean;
  readonly callback: (m: Buffer) => void;
  destroyed: boolean;
}
export interface RecordedPublisher extends RecordedEndpoint, RclPublisher {
  readonly sent: (object | Buffer)[];
  destroyed: boolean;
}
export interface RecordedService {
  readonly name: string;
  readonly type: string;
  readonly callback: (req: object, res: RclTriggerResponse) => void;
  destroyed: boolean;
}

const TYPE_NAMES: Record<number, string> = { 1: 'bool', 2: 'integer', 3: 'double', 4: 'string', 8: 'double_array', 9: 'string_array' };

export class RecordingNode implements RclNode {
  readonly subscriptions: RecordedSubscription[] = [];
  readonly publications: RecordedPublisher[] = [];
  readonly services: RecordedService[] = [];
  readonly timers: { period: bigint; callback: () => void; destroyed: boolean }[] = [];
  readonly parameters = new Map<string, { parameter: RecordedParameter; descriptor: RecordedDescriptor }>();
  readonly logs: string[] = [];
  readonly setCallbacks: ((ps: RclParameterValue[]) => RclSetParametersResult)[] = [];
  readonly lifecycle: boolean = false;
  clockNs = 0n;
  destroyed = false;
  readonly ns: string;

  constructor(
    readonly nodeName: string,
    namespace = '',
    readonly options: RclNodeOptions = {},
    readonly module?: RecordingRcl,
  ) {
    this.ns = module?.namespaceOverride ?? (namespace === '' ? '/' : namespace);
    module?.nodes.push(this);
    // rcl declares use_sim_time on every node.
    this.parameters.set('use_sim_time', { parameter: new RecordedParameter('use_sim_time', 1, false), descriptor: new RecordedDescriptor('use_sim_time', 1, '', false) });
  }

  /** The fully qualified name of a topic or service, after remapping. */
  resolve(name: string): string {
    let full: string;
    const ns = this.ns === '/' ? '' : this.ns;
    if (name.startsWith('/')) full = name;
    else if (name.startsWith('~/')) full = `${ns}/${this.nodeName}/${name.slice(2)}`;
    else full = `${ns}/${name}`;
    return this.module?.remaps.get(full) ?? this.module?.remaps.get(name) ?? full;
  }

  createSubscription(type: string, topic: string, options: RclSubscriptionOptions, callback: (m: Buffer) => void): object {
    const s: RecordedSubscription = { topic: this.resolve(topic), type, qos: profileOf(options.qos), raw: options.isRaw === true, callback, destroyed: false };
    this.subscriptions.push(s);
    this.module?.onEndpoint(this, 'subscription', s);
    return s;
  }
  createPublisher(type: string, topic: string, options: { qos?: string | object } = {}): RclPublisher {
    const sent: (object | Buffer)[] = [];
    const p: RecordedPublisher = {
      topic: this.resolve(topic),
      type,
      qos: profileOf(options.qos),
      sent,
      destroyed: false,
      publish: (m) => {
        if (p.destroyed) throw new Error(`publish on destroyed publisher ${p.topic}`);
        this.module?.onPublish(p, m);
      },
    };
    this.publications.push(p);
    this.module?.onEndpoint(this, 'publication', p);
    return p;
  }
  createService(type: string, name: string, callback: (req: object, res: RclTriggerResponse) => void): object {
    const s: RecordedService = { name: this.resolve(name), type, callback, destroyed: false };
    this.services.push(s);
    return s;
  }
  createTimer(period: bigint, callback: () => void): object {
    const t = { period, callback, destroyed: false };
    this.timers.push(t);
    return t;
  }
  destroySubscription(s: object): void {
    (s as RecordedSubscription).destroyed = true;
  }
  destroyPublisher(p: RclPublisher): void {
    (p as RecordedPublisher).destroyed = true;
  }
  destroyService(s: object): void {
    (s as RecordedService).destroyed = true;
  }
  destroyTimer(t: object): void {
    (t as { destroyed: boolean }).destroyed = true;
  }
  now(): RclTime {
    return { nanoseconds: this.clockNs };
  }
  getLogger() {
    return {
      info: (m: string) => this.logs.push(`info ${m}`),
      warn: (m: string) => this.logs.push(`warn ${m}`),
      error: (m: string) => this.logs.push(`error ${m}`),
    };
  }
  declareParameter(p: object, d?: object, ignoreOverride = false): unknown {
    const param = p as RecordedParameter;
    if (this.parameters.has(param.name)) throw new Error(`Parameter(${param.name}) already declared.`);
    const over = ignoreOverride ? undefined : this.module?.overrides.find((o) => o.name === param.name);
    if (over && over.type !== param.type) throw new Error(`parameter ${param.name}: override of type ${TYPE_NAMES[over.type]} for a ${TYPE_NAMES[param.type]} parameter`);
    const value = over ? over.value : param.value;
    const descriptor = (d as RecordedDescriptor | undefined) ?? new RecordedDescriptor(param.name, param.type);
    for (const cb of this.setCallbacks) {
      const r = cb([new RecordedParameter(param.name, param.type, value)]);
      if (!r.successful) throw new Error(r.reason);
    }
    this.parameters.set(param.name, { parameter: new RecordedParameter(param.name, param.type, value), descriptor });
    return param;
  }
  addOnSetParametersCallback(cb: (ps: RclParameterValue[]) => RclSetParametersResult): void {
    this.setCallbacks.push(cb);
  }
  getParameterOverrides(): RclParameterValue[] {
    return this.module?.overrides ?? [];
  }
  /** As rclnodejs: undeclared, read-only, type and range are checked here, then the callbacks. */
  setParameter(p: object): RclSetParametersResult {
    const param = p as RecordedParameter;
    const decl = this.parameters.get(param.name);
    if (!decl) return { successful: false, reason: `parameter ${param.name} is not declared` };
    if (decl.descriptor.readOnly) return { successful: false, reason: `parameter ${param.name} is read-only` };
    if (decl.descriptor.type !== param.type && !(param.name === 'use_sim_time')) return { successful: false, reason: `parameter ${param.name} is of type ${TYPE_NAMES[decl.descriptor.type]}` };
    const r = decl.descriptor.range as RecordedRange | undefined;
    if (r && (typeof param.value === 'number' || typeof param.value === 'bigint')) {
      const v = Number(param.value);
      const tol = r.tolerance ?? 1e-9;
      if (v < Number(r.from) - tol || v > Number(r.to) + tol) return { successful: false, reason: `parameter ${param.name} = ${v} is outside its range ${r.from} to ${r.to}` };
    }
    for (const cb of this.setCallbacks) {
      const res = cb([param]);
      if (!res.successful) return res;
    }
    decl.parameter.value = param.value;
    return { successful: true, reason: '' };
  }
  getPublishersInfoByTopic(topic: string): object[] {
    return this.module?.endpointsInfo(topic, 'publication') ?? [];
  }
  getSubscriptionsInfoByTopic(topic: string): object[] {
    return this.module?.endpointsInfo(topic, 'subscription') ?? [];
  }
  spin(): void {}
  destroy(): void {
    this.destroyed = true;
  }
  name(): string {
    return this.nodeName;
  }
  namespace(): string {
    return this.ns;
  }
}

type Callback = (prev: RclState) => number;
const state = (id: number): { id: number; label: string } => ({ id, label: ['unknown', 'unconfigured', 'inactive', 'active', 'finalized'][id]! });

/** The managed-node state machine of rcl_lifecycle (primary states and the transitions antiphon drives). */
export class RecordingLifecycleNode extends RecordingNode implements RclLifecycleNode {
  override readonly lifecycle = true;
  readonly transitions: { transition: string; from: string; to: string; result: number }[] = [];
  private current: { id: number; label: string } = state(STATE.unconfigured);
  private readonly cbs = new Map<string, Callback>();
  get currentState(): { id: number; label: string } {
    return this.current;
  }
  registerOnConfigure(cb: Callback): void { this.cbs.set('configure', cb); }
  registerOnActivate(cb: Callback): void { this.cbs.set('activate', cb); }
  registerOnDeactivate(cb: Callback): void { this.cbs.set('deactivate', cb); }
  registerOnCleanup(cb: Callback): void { this.cbs.set('cleanup', cb); }
  registerOnShutdown(cb: Callback): void { this.cbs.set('shutdown', cb); }
  registerOnError(cb: Callback): void { this.cbs.set('error', cb); }

  private transition(name: string, from: readonly number[], goal: number): { id: number; label: string } {
    if (!from.includes(this.current.id)) throw new Error(`transition ${name} is not valid from ${this.current.label}`);
    const prev = this.current;
    let r = 97;
    try {
      r = this.cbs.get(name)?.(prev) ?? 97;
    } catch {
      r = 99;
    }
    if (r === 97) this.current = state(goal);
    else if (r === 99) {
      const e = this.cbs.get('error')?.(prev) ?? 97;
      this.current = state(e === 97 ? STATE.unconfigured : STATE.finalized);
    }
    this.transitions.push({ transition: name, from: prev.label, to: this.current.label, result: r });
    return this.current;
  }
  configure(): { id: number; label: string } { return this.transition('configure', [STATE.unconfigured], STATE.inactive); }
  activate(): { id: number; label: string } { return this.transition('activate', [STATE.inactive], STATE.active); }
  deactivate(): { id: number; label: string } { return this.transition('deactivate', [STATE.active], STATE.inactive); }
  cleanup(): { id: number; label: string } { return this.transition('cleanup', [STATE.inactive], STATE.unconfigured); }
  shutdown(): { id: number; label: string } { return this.transition('shutdown', [STATE.unconfigured, STATE.inactive, STATE.active], STATE.finalized); }
}

/** A recording rcl module: every node created through it is kept in `nodes`. */
export class RecordingRcl implements RclModule {
  readonly nodes: RecordingNode[] = [];
  readonly remaps = new Map<string, string>();
  overrides: RclParameterValue[] = [];
  namespaceOverride: string | undefined;
  signalHandlersRemoved = false;
  initArgv: string[] | undefined;
  shutDown = false;

  readonly Node: RclModule['Node'];
  readonly lifecycle: RclModule['lifecycle'];
  readonly QoS = Object.assign(RecordedQoS, { profileSensorData: 'qos_profile_sensor_data', profileDefault: 'qos_profile_default', profileSystemDefault: 'qos_profile_system_default' });
  readonly Parameter = RecordedParameter;
  readonly ParameterDescriptor = RecordedDescriptor;
  readonly FloatingPointRange = RecordedRange;
  readonly IntegerRange = RecordedRange;

  constructor() {
    // eslint-disable-next-line @typescript-eslint/no-this-alias
    const mod = this;
    this.Node = class extends RecordingNode {
      constructor(name: string, ns?: string, _ctx?: undefined, options?: RclNodeOptions) {
        super(name, ns, options, mod);
      }
    };
    this.lifecycle = {
      LifecycleNode: class extends RecordingLifecycleNode {
        constructor(name: string, ns?: string, _ctx?: undefined, options?: RclNodeOptions) {
          super(name, ns, options, mod);
        }
      },
    };
  }

  async init(_ctx?: undefined, argv: string[] = []): Promise<void> {
    this.initArgv = argv;
  }
  removeROSArgs(argv: string[]): string[] {
    const i = argv.indexOf('--ros-args');
    return i < 0 ? argv : argv.slice(0, i);
  }
  removeSignalHandlers(): void {
    this.signalHandlersRemoved = true;
  }
  shutdown(): void {
    this.shutDown = true;
  }

  /** Hooks for the test stand-in. */
  onEndpoint(_node: RecordingNode, _kind: 'subscription' | 'publication', _e: RecordedEndpoint): void {}
  onPublish(p: RecordedPublisher, m: object | Buffer): void {
    p.sent.push(Buffer.isBuffer(m) ? Buffer.from(m) : m);
  }
  endpointsInfo(_topic: string, _kind: 'subscription' | 'publication'): object[] {
    return [];
  }

  /** The ROS graph recorded so far, in the `antiphon node --dry-run --json` shape. */
  graph(): DryRunGraph {
    return {
      nodes: this.nodes.map((n) => ({
        name: n.nodeName,
        namespace: n.ns,
        lifecycle: n.lifecycle,
        publications: n.publications.filter((p) => !p.destroyed).map((p) => ({ topic: p.topic, type: p.type, qos: { ...p.qos } })),
        subscriptions: n.subscriptions.filter((s) => !s.destroyed).map((s) => ({ topic: s.topic, type: s.type, qos: { ...s.qos } })),
        services: n.services.filter((s) => !s.destroyed).map((s) => ({ name: s.name, type: s.type })),
        parameters: [...n.parameters.values()].map(({ parameter, descriptor }) => ({
          name: parameter.name,
          type: TYPE_NAMES[descriptor.type] ?? String(descriptor.type),
          read_only: descriptor.readOnly,
          range: descriptor.range instanceof RecordedRange ? { from: Number(descriptor.range.from), to: Number(descriptor.range.to), step: Number(descriptor.range.step) } : null,
          description: descriptor.description,
        })),
      })),
    };
  }
}

export interface DryRunGraph {
  nodes: {
    name: string;
    namespace: string;
    lifecycle: boolean;
    publications: { topic: string; type: string; qos: QosProfile }[];
    subscriptions: { topic: string; type: string; qos: QosProfile }[];
    services: { name: string; type: string }[];
    parameters: { name: string; type: string; read_only: boolean; range: { from: number; to: number; step: number } | null; description: string }[];
  }[];
}
