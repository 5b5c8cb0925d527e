/**
 * The slice of rclnodejs (2.2.0) that antiphon uses, as a structural interface. The live node
 * is written against this, so it can run on a fake in tests; a test type-checks the real
 * package's published declarations against it (test/ros/rcl-surface.test.ts), and the opt-in
 * suite in test/ros-host/ runs it on a ROS 2 host.
 */

/** rclnodejs.Time: nanoseconds on the node's clock (ROS time, or /clock with use_sim_time). */
export interface RclTime {
  readonly nanoseconds: bigint;
}

export interface RclPublisher {
  /** A Buffer is published as serialized CDR, without conversion. */
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

export interface RclNode {
  /** With `isRaw: true` the callback receives the serialized CDR message as a Buffer. */
  createSubscription(typeClass: string, topic: string, options: { qos?: string | object; isRaw?: boolean }, callback: (message: Buffer) => void): unknown;
  createPublisher(typeClass: string, topic: string, options?: { qos?: string | object }): RclPublisher;
  createService(typeClass: string, serviceName: string, callback: (request: object, response: RclTriggerResponse) => void): unknown;
  createTimer(period: bigint, callback: () => void): unknown;
  now(): RclTime;
  getLogger(): RclLogger;
  declareParameter(parameter: object, descriptor?: object, ignoreOverride?: boolean): unknown;
  addOnSetParametersCallback(callback: (parameters: object[]) => RclSetParametersResult): void;
  spin(timeout?: number): void;
  destroy(): void;
  name(): string;
  namespace(): string;
}

export interface RclModule {
  init(context?: undefined, argv?: string[]): Promise<void>;
  Node: new (nodeName: string, namespace?: string) => RclNode;
  QoS: { readonly profileSensorData: string; readonly profileDefault: string; readonly profileSystemDefault: string };
  Parameter: new (name: string, type: number, value?: unknown) => object;
  ParameterDescriptor: new (name: string, type: number, description?: string, readOnly?: boolean) => object;
  removeROSArgs(argv: string[]): string[];
  shutdown(): void;
}

/** rcl_interfaces/msg/ParameterType values (ambient const enum in the declarations). */
export const PARAMETER_TYPE = { bool: 1, integer: 2, double: 3, string: 4, double_array: 8, string_array: 9 } as const;
