/** The bag layer's public surface: read, decode, write rosbag2 bags (MCAP and sqlite3). */
export { openBag, type OpenOptions } from './open.js';
export type { Bag, BagMessage, DefinitionText, MessageBatch, QosProfile, ReadOptions, StorageId, TopicInfo } from './types.js';
export { bagDecoders, MessageDecoders, toJsonValue, type DecoderOptions, type DecodePlace } from './decode.js';
export {
  decodePoseStamped,
  decodeTwistStamped,
  decodeWrenchStamped,
  encodeJointState,
  encodePoseStamped,
  encodeTwistStamped,
  encodeWrenchStamped,
  fixedDecoder,
  JointStateDecoder,
  POSE_STAMPED_STRIDE,
  readFrameId,
  readTopicSeries,
  TWIST_STAMPED_STRIDE,
  WRENCH_STAMPED_STRIDE,
  type FixedDecoder,
  type TopicSeries,
} from './fast.js';
export { BagWriter, copyBag, createBagWriter, WRITER_LIBRARY, type BagWriterOptions, type WriterTopic, type WrittenBag } from './writer.js';
export { describeQos, formatMetadataYaml, parseMetadataYaml, parseQos, type BagMetadata, type MetadataTopic } from './metadata.js';
export { assembleDefinition, builtinDefinition, builtinTypes, canonicalType, parseDefinition, shortType } from './definitions.js';
export { FileSource, MemorySource, type ByteSource } from './io.js';
