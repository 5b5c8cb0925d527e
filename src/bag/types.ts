/** The shapes the bag layer hands out. One `Bag` for every storage and layout. */
import type { Problem } from '../util/errors.js';

export type StorageId = 'mcap' | 'sqlite3';

/** One QoS profile as recorded (integer enums before metadata version 9, names from 9). */
export type QosProfile = Record<string, unknown>;

export interface TopicInfo {
  readonly name: string;
  /** As recorded, e.g. `geometry_msgs/msg/WrenchStamped`. */
  readonly type: string;
  /** `cdr` for every ROS 2 bag. */
  readonly serializationFormat: string;
  /** Messages on this topic in the storage files (not from metadata.yaml when the files tell). */
  readonly count: number;
  /** The offered QoS profiles, parsed from the recorded YAML ([] when none were recorded). */
  readonly offeredQos: readonly QosProfile[];
  /** The recorded QoS text as stored (YAML), '' when none. */
  readonly offeredQosText: string;
  /** `RIHS01_<hex>` when recorded, else ''. */
  readonly typeHash: string;
}

export interface BagMessage {
  readonly topic: string;
  readonly type: string;
  /** Receive time, ns since the epoch. */
  readonly logTimeNs: bigint;
  /** The serialized message (CDR, with its 4-byte encapsulation header). A view: do not modify. */
  readonly data: Uint8Array;
}

export interface ReadOptions {
  /** Only these topics (names). Unknown names are ignored. */
  readonly topics?: readonly string[];
  /** Inclusive lower bound on log time. */
  readonly startNs?: bigint;
  /** Inclusive upper bound on log time. */
  readonly endNs?: bigint;
}

/**
 * A run of messages in log-time order sharing one byte buffer: struct-of-arrays, no object per
 * message. Entry i is topic `topics[topicIndex[i]]`, time `logTimeNs[i]`, payload
 * `bytes.subarray(offset[i], offset[i] + length[i])` (or read it in place through `view`).
 */
export interface MessageBatch {
  readonly count: number;
  /** Index into the array returned by `Bag.topics()`. */
  readonly topicIndex: Uint32Array;
  readonly logTimeNs: BigInt64Array;
  readonly offset: Uint32Array;
  readonly length: Uint32Array;
  readonly bytes: Uint8Array;
  /** A DataView over exactly `bytes` (offsets above are valid in it). */
  readonly view: DataView;
}

/** Where a definition came from and in which language it is written. */
export interface DefinitionText {
  /** `ros2msg` (the only language decoded), `ros2idl`, or '' when the recorder had none. */
  readonly encoding: string;
  readonly text: string;
  /** File it was read from, or `built-in`, or what the caller passed. */
  readonly origin: string;
}

export interface Bag {
  /** What was opened (a bag directory or a single storage file). */
  readonly path: string;
  readonly storage: StorageId;
  /** Storage files in reading order. */
  readonly files: readonly string[];
  /** First and last log time over all messages (0n when the bag is empty). */
  readonly startNs: bigint;
  readonly endNs: bigint;
  readonly messageCount: number;
  /** The parsed metadata.yaml, when there was one. */
  readonly metadata: import('./metadata.js').BagMetadata | undefined;
  /** Problems found so far that did not stop reading (also logged). Grows while reading. */
  readonly warnings: readonly Problem[];
  /** Topics sorted by name. `MessageBatch.topicIndex` indexes this array. */
  topics(): readonly TopicInfo[];
  /** The message definition the bag carries for a type (either spelling of the type name). */
  definition(type: string): DefinitionText | undefined;
  /** Every definition the bag carries, keyed by type as recorded. */
  definitions(): ReadonlyMap<string, DefinitionText>;
  /** Messages in log-time order across files and topics (ties: file order, then record order). */
  messages(opts?: ReadOptions): Iterable<BagMessage>;
  /** The same messages in batches: the fast path for replay. */
  batches(opts?: ReadOptions): Iterable<MessageBatch>;
  close(): void;
}
