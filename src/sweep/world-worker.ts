/** Worker thread of `sweep --worlds`: loads MuJoCo once, then runs the (candidate, world) episodes it is sent. */
import { parentPort, workerData } from 'node:worker_threads';
import { loadMujoco } from '../sim/mujoco.js';
import { runWorldJob, type WorldJob, type WorldWorkerInit } from './worlds.js';

const init = workerData as WorldWorkerInit;
const port = parentPort;
if (port) {
  const mj = await loadMujoco();
  port.on('message', (m: { type: 'job'; job: WorldJob }) => {
    const j = m.job;
    try {
      port.postMessage({ type: 'result', id: j.id, metrics: runWorldJob(mj, init, j) });
    } catch (err) {
      port.postMessage({ type: 'error', id: j.id, message: (err as Error).stack ?? String(err) });
    }
  });
  port.postMessage({ type: 'ready' });
}
