/**
 * Logging through pino, on stderr only (so `--json` output on stdout stays clean). One format
 * per run: readable text when stderr is a terminal, pino JSON lines when it is not or when
 * `ANTIPHON_LOG_FORMAT=json` (`ANTIPHON_LOG_FORMAT=text` forces text). One child logger per
 * component.
 *
 * Warnings reach the user once: `warnOnce` drops a repeat of the same code, place and message
 * (a warning handed up through several layers, e.g. the bag reader, replay and the command).
 * Lines are written synchronously through `process.stderr.write`, in order with other output.
 */
import { pino, type Logger } from 'pino';
import { prettyFactory } from 'pino-pretty';
import { formatPlace, type Place, type Problem } from './errors.js';

let root: Logger | undefined;
const warned = new Set<string>();

/** `json` or `text`: what this process writes on stderr. */
export function logFormat(): 'json' | 'text' {
  const f = (process.env['ANTIPHON_LOG_FORMAT'] ?? '').trim().toLowerCase();
  if (f === 'json') return 'json';
  if (f === 'text' || f === 'pretty') return 'text';
  return process.stderr.isTTY ? 'text' : 'json';
}

function makeRoot(): Logger {
  const level = process.env['ANTIPHON_LOG_LEVEL'] ?? 'info';
  if (logFormat() === 'text') {
    // One line per entry: time, level, component, place, message, hint; other fields hidden.
    const pretty = prettyFactory({
      colorize: process.stderr.isTTY === true,
      translateTime: 'SYS:HH:MM:ss.l',
      hideObject: true,
      ignore: 'pid,hostname',
      messageFormat: (log: Record<string, unknown>, key: string) => {
        const place = log['where'] ? formatPlace(log['where'] as Place) : '';
        const hint = typeof log['hint'] === 'string' ? ` (${log['hint']})` : '';
        return `${String(log['component'] ?? 'antiphon')}: ${place ? `${place}: ` : ''}${String(log[key] ?? '')}${hint}`;
      },
    });
    return pino({ level }, { write: (line: string) => void process.stderr.write(pretty(line)) });
  }
  return pino({ level }, { write: (line: string) => void process.stderr.write(line) });
}

/** The child logger of one component (`filter`, `params`, `bag`, `sim`, ...). */
export function logger(component: string): Logger {
  root ??= makeRoot();
  return root.child({ component });
}

/** Log a problem as a warning, unless the same one was logged already. Returns true when logged. */
export function warnOnce(component: string, p: Problem, extra: Record<string, unknown> = {}): boolean {
  const key = `${p.code}\u0000${JSON.stringify(p.where ?? {})}\u0000${p.message}`;
  if (warned.has(key)) return false;
  warned.add(key);
  logger(component).warn({ code: p.code, ...(p.where ? { where: p.where } : {}), ...(p.hint ? { hint: p.hint } : {}), ...extra }, p.message);
  return true;
}

/** Forget the format and the warnings already given (tests that switch ANTIPHON_LOG_FORMAT). */
export function resetLogging(): void {
  root = undefined;
  warned.clear();
}
