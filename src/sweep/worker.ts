/**
 * Worker thread of `sweep` over bags: gets the decoded bags from the main thread (or, when it
 * is not sent them, decodes every bag once itself), every chunk of candidates and the claims
 * the pool's threads share; then claims chunks (pool.ts claimChunk) and evaluates them until
 * none is left, sharing work (share.ts). Handed the bags, it never loads the bag readers.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { DecodedBag } from './columns.js';
import { claimChunk, type BagSetup, type BagWorkerInit, type ChunkResult, type FromBagWorker } from './pool.js';
import { SharedEvaluator } from './share.js';

const init = workerData as BagWorkerInit;
const port = parentPort;
if (port) {
  const setup = await new Promise<BagSetup>((resolve) => port.once('message', (m: BagSetup) => resolve(m)));
  let bags: readonly DecodedBag[];
  if (setup.bags) bags = setup.bags;
  else {
    const { decodeBag } = await import('./decoded.js');
    const own: DecodedBag[] = [];
    for (const p of init.bags) own.push(await decodeBag(p, init.zoneNames));
    bags = own;
  }
  const ev = new SharedEvaluator(bags, init.labels, init.tolerance_s, init.share ?? true);
  const seen = new Set<number>();
  const say = (m: FromBagWorker) => port.postMessage(m);
  for (let k = claimChunk(setup.claims, setup.chunks, seen); k >= 0; k = claimChunk(setup.claims, setup.chunks, seen)) {
    const c = setup.chunks[k]!;
    try {
      const result: ChunkResult = { results: c.jobs.map((j) => ({ id: j.id, metrics: ev.metrics(j.left, j.right) })) };
      say({ type: 'result', id: c.id, metrics: result });
    } catch (err) {
      say({ type: 'error', id: c.id, message: (err as Error).stack ?? String(err) });
      break;
    }
  }
}
