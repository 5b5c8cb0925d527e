/** Worker thread of `sweep` over bags: decodes every bag once, then evaluates the chunks of candidates it is sent (sharing work: share.ts). */
import { parentPort, workerData } from 'node:worker_threads';
import { decodeBag, type DecodedBag } from './decoded.js';
import type { BagChunk, BagWorkerInit, ChunkResult } from './pool.js';
import { SharedEvaluator } from './share.js';

const init = workerData as BagWorkerInit;
const port = parentPort;
if (port) {
  const bags: DecodedBag[] = [];
  for (const p of init.bags) bags.push(await decodeBag(p, init.zoneNames));
  const ev = new SharedEvaluator(bags, init.labels, init.tolerance_s, init.share ?? true);
  port.on('message', (m: { type: 'job'; job: BagChunk }) => {
    const c = m.job;
    try {
      const result: ChunkResult = { results: c.jobs.map((j) => ({ id: j.id, metrics: ev.metrics(j.left, j.right) })) };
      port.postMessage({ type: 'result', id: c.id, metrics: result });
    } catch (err) {
      port.postMessage({ type: 'error', id: c.id, message: (err as Error).stack ?? String(err) });
    }
  });
  port.postMessage({ type: 'ready' });
}
