/**
 * The progress bar of the long commands (replay, compare, analyze): on stderr, only on a
 * terminal, never with --json or under CI, and as wide as the terminal allows (a 60-column
 * terminal gets a shorter bar, not a wrapped line).
 */
import cliProgress from 'cli-progress';

/** Bar width for a terminal of `columns` columns, with `fixed` columns of text around the bar. */
export function barWidth(columns: number | undefined, fixed: number): number {
  const cols = columns && columns > 0 ? columns : 80;
  return Math.max(5, Math.min(40, cols - fixed - 1));
}

/** A progress bar for `label`, or undefined where none should be drawn. */
export function progressBar(label: string, json: boolean): cliProgress.SingleBar | undefined {
  if (json || process.stderr.isTTY !== true || process.env['CI']) return undefined;
  const format = `${label} [{bar}] {percentage}% | {eta}s left`;
  // Text around the bar: the label, brackets and at most "100% | 99999s left".
  const fixed = label.length + 3 + 19;
  const bar = new cliProgress.SingleBar(
    { stream: process.stderr, hideCursor: true, format, barsize: barWidth(process.stderr.columns, fixed) },
    cliProgress.Presets.shades_classic,
  );
  return bar;
}
