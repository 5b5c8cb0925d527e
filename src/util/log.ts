/**
 * Logging through pino: JSON lines on stderr by default, human-readable when stderr is a
 * terminal. One child logger per component. Logs never go to stdout, so `--json` output
 * stays clean.
 */
import { pino, type Logger } from 'pino';

let root: Logger | undefined;

function makeRoot(): Logger {
  const level = process.env['ANTIPHON_LOG_LEVEL'] ?? 'info';
  if (process.stderr.isTTY) {
    return pino({
      level,
      transport: { target: 'pino-pretty', options: { destination: 2, colorize: true, translateTime: 'SYS:HH:MM:ss.l' } },
    });
  }
  return pino({ level }, pino.destination(2));
}

/** The child logger of one component (`filter`, `params`, `bag`, `sim`, ...). */
export function logger(component: string): Logger {
  root ??= makeRoot();
  return root.child({ component });
}
