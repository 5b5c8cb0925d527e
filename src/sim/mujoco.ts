/**
 * Loading MuJoCo's official WebAssembly build (mujoco-js) in Node, once per thread, and the
 * few calls the simulated cell needs: write an MJCF string into the module's in-memory file
 * system, compile it, and hand back the model and its data.
 *
 * Typed arrays from `MjData` (qpos, qvel, ctrl, sensordata, site_xpos, ...) are views onto
 * the WebAssembly heap. They go stale (length 0) if the heap grows, which only happens when
 * something is allocated, so the cell fetches them once after creating the data and checks
 * one of them per step (see `SimCell.views`).
 */
import type { MainModule, MjData, MjModel } from 'mujoco-js';

let modulePromise: Promise<MainModule> | undefined;
let fileCounter = 0;

/** The MuJoCo module of this thread (loaded on first use, about 0.1 s). */
export function loadMujoco(): Promise<MainModule> {
  modulePromise ??= (async () => {
    const factory = (await import('mujoco-js')).default as unknown as (opts?: unknown) => Promise<MainModule>;
    const mj = await factory();
    const fs = (mj as unknown as { FS: EmscriptenFs }).FS;
    try {
      fs.mkdir('/antiphon');
    } catch {
      // already there
    }
    return mj;
  })();
  return modulePromise;
}

interface EmscriptenFs {
  mkdir(path: string): void;
  writeFile(path: string, data: string): void;
  unlink(path: string): void;
}

/** Compile an MJCF document. Throws with MuJoCo's message when it does not compile. */
export function compileMjcf(mj: MainModule, xml: string): { model: MjModel; data: MjData } {
  const fs = (mj as unknown as { FS: EmscriptenFs }).FS;
  const path = `/antiphon/cell-${fileCounter++}.xml`;
  fs.writeFile(path, xml);
  let model: MjModel;
  try {
    model = mj.MjModel.loadFromXML(path);
  } finally {
    fs.unlink(path);
  }
  if (!model) throw new Error('MuJoCo did not compile the generated MJCF');
  const data = new mj.MjData(model);
  return { model, data };
}

/** Object type codes for mj_name2id. */
export function objectId(mj: MainModule, model: MjModel, type: 'body' | 'joint' | 'geom' | 'site' | 'actuator' | 'sensor', name: string): number {
  const t = {
    body: mj.mjtObj.mjOBJ_BODY,
    joint: mj.mjtObj.mjOBJ_JOINT,
    geom: mj.mjtObj.mjOBJ_GEOM,
    site: mj.mjtObj.mjOBJ_SITE,
    actuator: mj.mjtObj.mjOBJ_ACTUATOR,
    sensor: mj.mjtObj.mjOBJ_SENSOR,
  }[type] as unknown as { value: number };
  const id = mj.mj_name2id(model, t.value, name);
  if (id < 0) throw new Error(`MJCF has no ${type} named '${name}'`);
  return id;
}
