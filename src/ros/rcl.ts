/**
 * The slice of rclnodejs (2.2.0) that antiphon uses, as a structural interface. The live node
 * is written against this, so the same construction code runs on rclnodejs, on the recording
 * stand-in of `antiphon node --dry-run` (src/ros/recorder.ts) and on the test stand-in; a test
 * type-checks the real package's published declarations against it
 * (test/ros/rcl-surface.test.ts), and the opt-in suite in test/ros-host/ runs it on ROS 2.
 */

/** rclnodejs.Time: nanoseconds on the node's clock (ROS time, or /clock with use_sim_time). */
export interface RclTime {
  readonly nanoseconds: bigint;
}

export interface RclPublisher {
  /** A Buffer is published as serialized CDR, without conversion; an object is converted. */
  publish(message: object | Buffer): void;
}

export interface RclTriggerResponse {
  send(response: { success: boolean; message: string }): void;
}

export interface RclLogger {
  info(message: string): unknown;
  warn(message: string): unknown;
  error(message: string): unknown;
}

export interface RclSetParametersResult {
  successful: boolean;
  reason: string;
}

/** rclnodejs.Parameter as handed to callbacks and returned by getParameterOverrides(). */
export interface RclParameterValue {
  readonly name: string;
  readonly type: number;
  readonly value: unknown;
}

export interface RclSubscriptionOptions {
  qos?: string | object;
  isRaw?: boolean;
}

export interface RclNode {
  /** With `isRaw: true` the callback receives the serialized CDR message as a Buffer. */
  createSubscription(typeClass: string, topic: string, options: RclSubscriptionOptions, callback: (message: Buffer) => void): object;
  createPublisher(typeClass: string, topic: string, options?: { qos?: string | object }): RclPublisher;
  createService(typeClass: string, serviceName: string, callback: (request: object, response: RclTriggerResponse) => void): object;
  createTimer(period: bigint, callback: () => void): object;
  destroySubscription(subscription: object): void;
  destroyPublisher(publisher: RclPublisher): void;
  destroyService(service: object): void;
  destroyTimer(timer: object): void;
  now(): RclTime;
  getLogger(): RclLogger;
  declareParameter(parameter: object, descriptor?: object, ignoreOverride?: boolean): unknown;
  addOnSetParametersCallback(callback: (parameters: RclParameterValue[]) => RclSetParametersResult): void;
  getParameterOverrides(): RclParameterValue[];
  setParameter(parameter: object): RclSetParametersResult;
  /** Endpoint info of the publishers on a topic (node name, QoS profile), for the QoS report. */
  getPublishersInfoByTopic(topic: string, noDemangle: boolean): object[];
  getSubscriptionsInfoByTopic(topic: string, noDemangle: boolean): object[];
  spin(timeout?: number): void;
  destroy(): void;
  name(): string;
  namespace(): string;
}

/**
 * rclnodejs.lifecycle.State: its JavaScript has `id` and `label` fields, its declarations only
 * `asMessage()`; read it with stateLabel().
 */
export interface RclState {
  readonly id?: number;
  readonly label?: string;
  asMessage?(): { id: number; label: string };
}

export function stateLabel(s: RclState): string {
  return s.label ?? s.asMessage?.().label ?? 'unknown';
}

/** rclnodejs.lifecycle.LifecycleNode: a Node with the managed-node state machine. */
export interface RclLifecycleNode extends RclNode {
  readonly currentState: RclState;
  registerOnConfigure(cb: (prev: RclState) => number): void;
  registerOnActivate(cb: (prev: RclState) => number): void;
  registerOnDeactivate(cb: (prev: RclState) => number): void;
  registerOnCleanup(cb: (prev: RclState) => number): void;
  registerOnShutdown(cb: (prev: RclState) => number): void;
  registerOnError(cb: (prev: RclState) => number): void;
  configure(): RclState;
  activate(): RclState;
  deactivate(): RclState;
  cleanup(): RclState;
  shutdown(): RclState;
}

/** Node options (rclnodejs NodeOptions accepts a plain object). */
export interface RclNodeOptions {
  startParameterServices?: boolean;
  automaticallyDeclareParametersFromOverrides?: boolean;
  enableRosout?: boolean;
}

export interface RclModule {
  init(context?: undefined, argv?: string[]): Promise<void>;
  Node: new (nodeName: string, namespace?: string) => RclNode;
  lifecycle: { LifecycleNode: new (nodeName: string, namespace?: string) => RclLifecycleNode };
  QoS: (new (history?: number, depth?: number, reliability?: number, durability?: number) => object) & {
    readonly profileSensorData: string;
    readonly profileDefault: string;
    readonly profileSystemDefault: string;
  };
  Parameter: new (name: string, type: number, value?: unknown) => object;
  /** `range` is an instance made by FloatingPointRange or IntegerRange of the same module. */
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  ParameterDescriptor: new (name: string, type: number, description?: string, readOnly?: boolean, range?: any) => object;
  FloatingPointRange: new (from: number, to: number, step?: number, tolerance?: number) => object;
  IntegerRange: new (from: bigint, to: bigint, step?: bigint) => object;
  removeROSArgs(argv: string[]): string[];
  /** Removes the SIGINT handler rclnodejs installs when imported (which would destroy the nodes first). */
  removeSignalHandlers(): void;
  shutdown(): void;
}

/** rcl_interfaces/msg/ParameterType values (ambient const enum in the declarations). */
export const PARAMETER_TYPE = { bool: 1, integer: 2, double: 3, string: 4, double_array: 8, string_array: 9 } as const;

/** lifecycle_msgs/msg/Transition callback results (ambient const enum CallbackReturnCode). */
export const CALLBACK = { success: 97, failure: 98, error: 99 } as const;

/** lifecycle_msgs/msg/State primary state ids. */
export const STATE = { unknown: 0, unconfigured: 1, inactive: 2, active: 3, finalized: 4 } as const;
