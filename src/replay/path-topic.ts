/**
 * Replay with the nominal path from a topic in the bag (`replay --path-topic`): the first
 * nav_msgs/msg/Path message on that topic replaces the parameters' path for the whole replay,
 * checked with the same rules as the parameters (src/ros/path-msg.ts). Later messages on the
 * topic that differ from it are not applied (replay cannot tell where the live node was
 * inactive); one warning counts them. With `--path-of left-tool` or `right-tool` the poses are
 * that arm's planned tool path, turned into the object path through the grasp offset.
 */
import type { Bag } from '../bag/types.js';
import { canonicalType } from '../bag/definitions.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { configWithPath, decodePath, objectPathFromTool, PATH_TYPE, topicPathProblems, type PathOf, type TopicPath } from '../ros/path-msg.js';
import { InputError, type Problem } from '../util/errors.js';

export interface BagPath {
  readonly path: TopicPath;
  readonly configs: { [A in ArmName]?: ArmConfig };
  /** Problems that did not stop the replay (later, different paths on the topic). */
  readonly warnings: Problem[];
}

/** The first path on `topic` of the bag, applied to each arm's configuration; InputError (exit 2) when absent or invalid. */
export function pathFromBag(bag: Bag, topic: string, configs: { readonly [A in ArmName]?: ArmConfig }, cellFrame: string, of: PathOf = 'object'): BagPath {
  const info = bag.topics().find((t) => t.name === topic);
  if (!info) {
    const paths = bag.topics().filter((t) => canonicalType(t.type) === PATH_TYPE).map((t) => t.name);
    throw new InputError({ code: 'replay.no_path_topic', message: `the bag has no topic ${topic}`, where: { file: bag.path, option: '--path-topic', topic }, hint: paths.length ? `a ${PATH_TYPE} topic of the bag: ${paths.join(', ')}` : `the bag has no ${PATH_TYPE} topic; leave out --path-topic to take the path from the parameters` });
  }
  if (canonicalType(info.type) !== PATH_TYPE) {
    throw new InputError({ code: 'replay.path_topic_type', message: `${topic} has type ${info.type}`, where: { file: bag.path, option: '--path-topic', topic }, hint: `a topic of type ${PATH_TYPE}` });
  }
  let first: { data: Uint8Array; ns: bigint } | undefined;
  let differing = 0;
  for (const m of bag.messages({ topics: [topic] })) {
    if (!first) first = { data: m.data.slice(), ns: m.logTimeNs };
    else if (!sameBytes(first.data, m.data)) differing++;
  }
  if (!first) throw new InputError({ code: 'replay.path_topic_empty', message: `${topic} has no messages`, where: { file: bag.path, option: '--path-topic', topic }, hint: 'a bag with at least one path message on the topic' });
  const where = { file: bag.path, topic };
  const raw = decodePath(first.data, where);
  if ('code' in raw) throw new InputError({ ...raw, message: `${topic} (message at ${first.ns} ns): ${raw.message}` });
  // A tool path gives the object path through the grasp offset (both arms run the same task).
  const anyConfig = (configs.left ?? configs.right)!;
  const d = objectPathFromTool(raw, of, anyConfig.task.object.grasp_offset_m);
  const out: { [A in ArmName]?: ArmConfig } = {};
  const problems: Problem[] = [];
  for (const arm of ['left', 'right'] as const) {
    const c = configs[arm];
    if (!c) continue;
    const p = topicPathProblems(c, d, cellFrame, where);
    if (p.length) problems.push(...p.map((x) => ({ ...x, message: `[${arm}] ${topic} (message at ${first!.ns} ns): ${x.message}` })));
    else out[arm] = configWithPath(c, d);
  }
  if (problems.length) throw new InputError(problems);
  const warnings: Problem[] = differing
    ? [{ code: 'replay.path_topic_changed', message: `${differing} later message${differing === 1 ? '' : 's'} on ${topic} differ from the first; replay used the first path throughout`, where }]
    : [];
  return { path: d, configs: out, warnings };
}

function sameBytes(a: Uint8Array, b: Uint8Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
