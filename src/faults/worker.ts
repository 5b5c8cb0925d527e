/** Worker thread of `faults`: runs the fault episodes it is sent. */
import { parentPort, workerData } from 'node:worker_threads';
import { runCampaignJob, type CampaignInit, type CampaignJob } from './campaign.js';

const init = workerData as CampaignInit;
const port = parentPort;
if (port) {
  port.on('message', (j: CampaignJob) => {
    try {
      port.postMessage({ type: 'result', outcome: runCampaignJob(init, j) });
    } catch (err) {
      port.postMessage({ type: 'error', message: (err as Error).stack ?? String(err) });
    }
  });
  port.postMessage({ type: 'ready' });
}
