/** Worker thread of `sweep` over bags: decodes every bag once, then evaluates the candidates it is sent. */
import { parentPort, workerData } from 'node:worker_threads';
import { decodeBag, type DecodedBag } from './decoded.js';
import { evaluateBag, metricsFromBags } from './evaluate.js';
import type { BagJob, BagWorkerInit } from './pool.js';

const init = workerData as BagWorkerInit;
const port = parentPort;
if (port) {
  const bags: DecodedBag[] = [];
  for (const p of init.bags) bags.push(await decodeBag(p, init.zoneNames));
  port.on('message', (m: { type: 'job'; job: BagJob }) => {
    const j = m.job;
    try {
      const metrics = metricsFromBags(bags.map((b, k) => evaluateBag(b, j.left, j.right, init.labels[k]!, init.tolerance_s)));
      port.postMessage({ type: 'result', id: j.id, metrics });
    } catch (err) {
      port.postMessage({ type: 'error', id: j.id, message: (err as Error).stack ?? String(err) });
    }
  });
  port.postMessage({ type: 'ready' });
}
