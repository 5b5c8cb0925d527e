/** Worker thread of `compare`: loads MuJoCo once, then runs the episodes it is sent. */
import { parentPort, workerData } from 'node:worker_threads';
import { outcomeOf, runJob, type CompareJob, type WorkerInit } from './compare.js';
import { loadMujoco } from './mujoco.js';

const init = workerData as WorkerInit;
const port = parentPort;
if (port) {
  const mj = await loadMujoco();
  port.on('message', (m: { type: 'job'; job: CompareJob }) => {
    const j = m.job;
    try {
      const r = runJob(mj, init, j);
      port.postMessage({ type: 'result', id: j.id, outcome: outcomeOf(j.world, j.seed, r.summary, r.measures, r.beliefTiming) });
    } catch (err) {
      port.postMessage({ type: 'error', id: j.id, message: (err as Error).stack ?? String(err) });
    }
  });
  port.postMessage({ type: 'ready' });
}
