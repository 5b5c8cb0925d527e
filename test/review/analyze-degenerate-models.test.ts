/**
 * Review finding (fuzzer, merged tree): `analyze --model` escaped with an internal error (exit 70,
 * a stack trace) on mutated models whose numerics fail: the Riccati iteration reached values
 * that are not finite, or the eigenvalue decomposition threw inside ml-matrix. Such a model is
 * bad input: exit 2, a model.* code, the file, and a hint. The inputs in test/review/inputs are
 * the mutated copies of examples/linear-team.yaml (our own example) that failed, kept as found.
 */
import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { register } from '../../src/cli/analyze.js';
import { runRegistered } from '../support/run-command.js';

const DIR = 'test/review/inputs';
const MODELS = readdirSync(DIR).filter((f) => f.startsWith('analyze-model-'));

describe('review: analyze on models that defeat the numerics', () => {
  it('there are saved inputs', () => expect(MODELS.length).toBeGreaterThan(0));
  it.each(MODELS)('%s: exit 2 with a model.* problem, never an internal error', async (name) => {
    const r = await runRegistered(register, 'analyze', ['--model', join(DIR, name), '--json']);
    expect(r.stderr + r.stdout).not.toMatch(/internal error/);
    expect(r.code).toBe(2);
    expect(r.stdout + r.stderr).toMatch(/model\.|param\.|yaml\.|input\./);
  }, 60_000);
});
