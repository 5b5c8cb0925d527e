/**
 * Interruption without loss. A command that can be interrupted calls `watchInterrupts()` before
 * its long work: the first SIGINT or SIGTERM only sets a flag, the work loops check it
 * (`interrupted()`) at their unit boundaries (a sample batch, an episode, a world), finish the
 * current unit, finalize their outputs (the output bag closed with its summary, summary.json
 * marked `"interrupted": true`) and the command exits 130 (SIGINT) or 143 (SIGTERM), the shell
 * convention 128 + signal number. A second signal ends the process at once (exit 128 + n; an
 * output folder in progress is left as `.NAME.partial-PID`, removed by the next run).
 *
 * Synchronous work cannot see a signal until it yields: loops that run long call
 * `yieldToSignals()` now and then (one macrotask turn).
 */

import { logger } from './log.js';

const CODES: Record<'SIGINT' | 'SIGTERM', number> = { SIGINT: 130, SIGTERM: 143 };

interface State {
  signal: 'SIGINT' | 'SIGTERM' | null;
  depth: number;
}

const state: State = { signal: null, depth: 0 };

function onSignal(sig: NodeJS.Signals): void {
  const s = sig === 'SIGTERM' ? 'SIGTERM' : 'SIGINT';
  if (state.signal !== null) {
    // A second signal: stop now.
    process.exit(CODES[s]);
  }
  state.signal = s;
  process.stderr.write(`antiphon: ${s} received: finishing the current unit of work and writing what is done (send it again to stop at once)\n`);
}

/**
 * Start watching SIGINT and SIGTERM (nestable); the returned function stops watching. While
 * watched, the signals do not end the process by themselves.
 */
export function watchInterrupts(): () => void {
  if (state.depth++ === 0) {
    state.signal = null;
    process.on('SIGINT', onSignal);
    process.on('SIGTERM', onSignal);
    logger('interrupt').debug('watching SIGINT and SIGTERM');
  }
  let done = false;
  return () => {
    if (done) return;
    done = true;
    if (--state.depth === 0) {
      process.off('SIGINT', onSignal);
      process.off('SIGTERM', onSignal);
    }
  };
}

/** True while someone watches the signals (other signal handlers then leave the process alone). */
export function interruptsWatched(): boolean {
  return state.depth > 0;
}

/** True once a watched SIGINT or SIGTERM arrived. */
export function interrupted(): boolean {
  return state.signal !== null;
}

/** The signal that arrived, or null. */
export function interruptSignal(): 'SIGINT' | 'SIGTERM' | null {
  return state.signal;
}

/** The exit code for the signal that arrived (130 SIGINT, 143 SIGTERM), or `otherwise`. */
export function interruptExitCode(otherwise: number): number {
  return state.signal ? CODES[state.signal] : otherwise;
}

/**
 * Test hook (real signals, real child processes): with ANTIPHON_TEST_SIGNAL_AFTER_YIELDS=n the
 * process sends itself ANTIPHON_TEST_SIGNAL (SIGINT, SIGTERM or SIGKILL; default SIGINT) at the n-th
 * yield while watched, so a test can interrupt a run at a known point of its work.
 */
const selfAfter = Number(process.env['ANTIPHON_TEST_SIGNAL_AFTER_YIELDS'] ?? Number.NaN);
const selfSignal: NodeJS.Signals = (['SIGTERM', 'SIGKILL'] as const).find((s) => s === process.env['ANTIPHON_TEST_SIGNAL']) ?? 'SIGINT';
let yields = 0;

/** One macrotask turn, so that a pending signal's handler runs. */
export function yieldToSignals(): Promise<void> {
  if (state.depth > 0 && ++yields === selfAfter) process.kill(process.pid, selfSignal);
  return new Promise((resolve) => setImmediate(resolve));
}

/** What a summary adds when the run was interrupted (nothing otherwise). */
export function interruptedFields(extra: Record<string, unknown> = {}): Record<string, unknown> {
  return state.signal ? { interrupted: true, signal: state.signal, ...extra } : {};
}

/** For tests: forget a signal seen. */
export function resetInterruptState(): void {
  state.signal = null;
}
