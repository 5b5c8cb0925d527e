/**
 * Worker thread of `sweep` over bags: gets the decoded bags from the main thread (or, when it
 * is not sent them, decodes every bag once itself), every chunk of candidates and the claims
 * the pool's threads share; then claims chunks (pool.ts claimChunk) and evaluates them until
 * none is left, sharing work (share.ts). Handed the bags, it never loads the bag readers, and it
 * warms its JIT while it waits for them (warmup.ts).
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { DecodedBag } from './columns.js';
import { claimChunk, type BagSetup, type BagWorkerInit, type ChunkResult, type FromBagWorker } from './pool.js';
import { SharedEvaluator } from './share.js';

/** At most this many warm-up rounds on a 0.5 s made-up bag (each about 3 200 arm steps and filter passes; 70 ms cold, 3 ms warm). */
const WARMUP_ROUNDS = 12;

const init = workerData as BagWorkerInit;
const port = parentPort;
if (port) {
  let arrived: BagSetup | undefined;
  const next = new Promise<BagSetup>((resolve) => port.once('message', (m: BagSetup) => resolve((arrived = m))));
  if (init.warmup) {
    // While the main thread decodes: a few rounds on a made-up bag, with pauses that leave the
    // core to the compiler threads; stopped as soon as the bags arrive.
    const { warmUp, warmupBag } = await import('./warmup.js');
    const bag = warmupBag(init.warmup.left, 0.5);
    for (let r = 0; r < WARMUP_ROUNDS && !arrived; r++) {
      warmUp(bag, init.warmup.left, init.warmup.right, init.tolerance_s);
      await new Promise<void>((ok) => setTimeout(ok, 2));
    }
  }
  const setup = await next;
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
