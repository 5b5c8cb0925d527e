/** `antiphon check-config <file>`: resolve a parameters file for both arms, or list its errors. */
import type { Command } from 'commander';
import { loadCell, type LoadedArm } from '../params/config.js';
import { describeAllowed } from '../params/load.js';
import { taskFigures, type TaskFigures } from '../params/task-geometry.js';
import { SCHEMA } from '../params/schema.js';
import type { ResolvedValue } from '../params/spec.js';
import { InputError } from '../util/errors.js';
import { printJson, printText, runCommand } from './common.js';

function sourceText(v: ResolvedValue): string {
  const s = v.source;
  if (s.kind === 'default') return 'default';
  return `${s.file}:${s.line ?? '?'}:${s.column ?? '?'} [${s.section}]`;
}

function armJson(a: LoadedArm): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const v of a.values.values()) {
    out[v.key] = { value: v.value, unit: v.spec.unit, source: v.source.kind === 'default' ? 'default' : { file: v.source.file, section: v.source.section, line: v.source.line, column: v.source.column } };
  }
  return out;
}

/** The task's geometry in words: path length, tightest turn, each zone's clearance and detours. */
export function taskText(t: TaskFigures): string[] {
  const mm = (x: number) => (Number.isFinite(x) ? `${x.toFixed(3)} m` : 'none');
  const lines = [
    `task: ${t.planar ? 'planar straight path (task.start_m -> task.goal_m)' : `path of ${t.waypoints} waypoints`}, length ${mm(t.length_m)}, minimum turn radius ${Number.isFinite(t.min_turn_radius_m) ? mm(t.min_turn_radius_m) : 'none (straight)'}`,
  ];
  for (const z of t.zones) {
    const det = z.detours.map((d) => `${d.detour} ${d.allowed ? mm(d.shift_m) : 'not allowed'}`).join(', ');
    lines.push(`  zone ${z.name}: ${z.clearance_m > 0 ? `clearance from the nominal path ${mm(z.clearance_m)}` : 'the nominal path enters it'} at s = ${mm(z.at_s_m)}${z.clear_by_margin ? ' (clear by the margin: no detour needed)' : `; detours: ${det}; cheapest: ${z.cheapest}`}`);
  }
  return lines;
}

/** JSON form (an infinite radius or shift as null). */
function taskJson(t: TaskFigures): unknown {
  return JSON.parse(JSON.stringify(t, (_k, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? null : v)));
}

export function register(program: Command): void {
  program
    .command('check-config')
    .description('Validate a ROS 2 parameters file against the schema and print the resolved parameters per arm with their sources.')
    .argument('[file]', 'parameters file (YAML); without it, the built-in defaults')
    .option('--arm <arm>', 'only this arm: left or right')
    .option('--list', 'list every parameter of the schema (type, unit, default, allowed range) and exit')
    .option('--json', 'machine-readable output on stdout')
    .action(async (file: string | undefined, opts: { arm?: string; list?: boolean; json?: boolean }) =>
      runCommand(!!opts.json, () => {
        if (opts.list) {
          if (opts.json) printJson(SCHEMA);
          else printText(SCHEMA.map((s) => `${s.key}  [${s.unit || '-'}]  default ${JSON.stringify(s.default ?? 'required')}\n    ${s.description}\n    allowed: ${describeAllowed(s)}`).join('\n'));
          return 0;
        }
        const cell = loadCell(file);
        const arms = opts.arm === undefined ? (['left', 'right'] as const) : ([opts.arm] as const);
        for (const a of arms) {
          if (a !== 'left' && a !== 'right') {
            throw new InputError({ code: 'cli.bad_arm', message: `--arm must be left or right, got '${a}'`, where: { option: '--arm' } });
          }
        }
        if (opts.json) {
          printJson({ ok: true, file: file ?? null, task: taskJson(taskFigures(cell.left.config.task)), arms: Object.fromEntries(arms.map((a) => [a, armJson(cell[a as 'left' | 'right'])])) });
          return 0;
        }
        const lines: string[] = [`parameters: ${file ?? '(built-in defaults)'} - ok`, ...taskText(taskFigures(cell.left.config.task))];
        for (const a of arms) {
          lines.push('', `[${a}]`);
          for (const v of cell[a as 'left' | 'right'].values.values()) {
            lines.push(`  ${v.key} = ${JSON.stringify(v.value)}${v.spec.unit && v.spec.unit !== '1' ? ' ' + v.spec.unit : ''}    (${sourceText(v)})`);
          }
        }
        printText(lines.join('\n'));
        return 0;
      }),
    );
}
