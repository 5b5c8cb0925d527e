/**
 * What every command shares: the JSON/text output switch, error printing and exit codes.
 * Command files stay thin: parse arguments, call into the library, print.
 */
import { InputError, EXIT_BAD_INPUT, EXIT_OK, formatProblem, problemToJson } from '../util/errors.js';

/** Write a value as one JSON document on stdout. */
export function printJson(value: unknown): void {
  process.stdout.write(JSON.stringify(value, null, 2) + '\n');
}

/** Write plain text on stdout. */
export function printText(text: string): void {
  process.stdout.write(text.endsWith('\n') ? text : text + '\n');
}

/**
 * Run a command body, mapping its outcome to an exit code. The body returns the exit code
 * (0 ok, 1 checks failed). An InputError prints its problems (as JSON with `--json`) and exits 2.
 * Any other error is a bug: it prints the stack and exits 70 (EX_SOFTWARE).
 */
export async function runCommand(json: boolean, body: () => Promise<number> | number): Promise<void> {
  try {
    process.exitCode = (await body()) ?? EXIT_OK;
  } catch (err) {
    if (err instanceof InputError) {
      if (json) printJson({ ok: false, errors: err.problems.map(problemToJson) });
      for (const p of err.problems) process.stderr.write(`antiphon: ${formatProblem(p)}\n`);
      process.exitCode = EXIT_BAD_INPUT;
      return;
    }
    process.stderr.write(`antiphon: internal error: ${(err as Error).stack ?? String(err)}\n`);
    process.exitCode = 70;
  }
}

/** Parse a number option, refusing anything that is not a finite number within [min, max]. */
export function numberOption(option: string, raw: string | undefined, min: number, max: number): number | undefined {
  if (raw === undefined) return undefined;
  const v = Number(raw);
  if (raw.trim() === '' || !Number.isFinite(v) || v < min || v > max) {
    throw new InputError({
      code: 'cli.bad_number',
      message: `${option} must be a number from ${min} to ${max}, got '${raw}'`,
      where: { option },
    });
  }
  return v;
}

/** Parse an integer option within [min, max]. */
export function integerOption(option: string, raw: string | undefined, min: number, max: number): number | undefined {
  const v = numberOption(option, raw, min, max);
  if (v !== undefined && !Number.isInteger(v)) {
    throw new InputError({ code: 'cli.bad_integer', message: `${option} must be a whole number, got '${raw}'`, where: { option } });
  }
  return v;
}
