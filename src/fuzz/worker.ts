/**
 * The fuzzer's worker thread: runs cases one at a time, in-process, and reports each result with
 * the process's peak resident memory so far. Started by engine.ts with resource limits on its
 * heap; the main thread enforces the time bound (a hung case is terminated with the worker).
 */
import { parentPort, workerData } from 'node:worker_threads';
import { runCase, type FuzzCase } from './case.js';

const { workDir, vars } = workerData as { workDir: string; vars: Record<string, string> };

process.on('unhandledRejection', (err) => {
  parentPort!.postMessage({ type: 'fatal', detail: `unhandled rejection: ${(err as Error)?.stack ?? String(err)}` });
});

parentPort!.on('message', async (c: FuzzCase) => {
  const result = await runCase(c, workDir, vars);
  parentPort!.postMessage({ type: 'done', id: c.id, result, maxRssKb: process.resourceUsage().maxRSS });
});
parentPort!.postMessage({ type: 'ready' });
