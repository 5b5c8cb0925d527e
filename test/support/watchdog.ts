/** Watchdog inputs for tests: nothing wrong, nothing seen yet, every input required, `joints` joints at rest. */
import { INPUTS, watchdogInputs, type WatchdogInputs } from '../../src/core/watchdog.js';

export function requiredInputs(joints = 6): WatchdogInputs {
  return watchdogInputs({
    jointVelocity: new Float64Array(joints),
    jointCount: joints,
    lastSeen: new Float64Array(INPUTS.length).fill(Number.NaN),
    required: new Uint8Array(INPUTS.length).fill(1),
  });
}
