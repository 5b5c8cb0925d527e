/**
 * The paired tests of `compare` against SciPy (Debian's python3-scipy under /usr/bin/python3):
 * the sign test against `scipy.stats.binomtest(k, n, 0.5)` (two-sided), the Wilcoxon signed-rank
 * test against `scipy.stats.wilcoxon(d, zero_method='wilcox', correction=False, method=...)` with
 * the method ours names ('exact' → 'exact', 'normal' → 'asymptotic', called 'approx' before SciPy 1.11), and ln Γ against
 * `scipy.special.gammaln`, on seeded random cases. Without SciPy the test is skipped locally and
 * fails under CI.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { logGamma, signTest, wilcoxonSignedRank } from '../../src/sim/stats.js';
import { Rng } from '../../src/util/rng.js';

const PYTHON = '/usr/bin/python3';
const MISSING = '.ci/run must install python3-scipy (apt-get install -y python3-scipy) for /usr/bin/python3';
const available = spawnSync(PYTHON, ['-c', 'import scipy.stats'], { encoding: 'utf8' }).status === 0;

if (!available && process.env['CI']) {
  describe('paired tests against SciPy', () => {
    it('needs SciPy', () => {
      throw new Error(MISSING);
    });
  });
}

const SCRIPT = `
import json, sys
from scipy.stats import binomtest, wilcoxon
from scipy.special import gammaln
c = json.load(sys.stdin)
out = {
  'sign': [binomtest(k, n, 0.5).pvalue if n > 0 else 1.0 for k, n in c['sign']],
  'wilcoxon': [],
  'gammaln': [float(gammaln(x)) for x in c['gammaln']],
}
for d, m in c['wilcoxon']:
    try:
        r = wilcoxon(d, zero_method='wilcox', correction=False, method=('exact' if m == 'exact' else 'asymptotic'))
    except ValueError:  # SciPy before 1.11 calls the normal approximation 'approx'
        r = wilcoxon(d, zero_method='wilcox', correction=False, method=('exact' if m == 'exact' else 'approx'))
    out['wilcoxon'].append([float(r.statistic), float(r.pvalue)])
json.dump(out, sys.stdout)
`;

describe.skipIf(!available)(`paired tests against SciPy${available ? '' : ` (skipped: ${MISSING})`}`, () => {
  const rng = new Rng(20261202);
  const sign: [number, number][] = [[0, 0], [0, 1], [1, 1], [3, 10], [5, 10], [9, 10], [0, 25], [12, 25], [40, 100], [61, 100], [250, 480], [3, 7]];
  for (let i = 0; i < 20; i++) {
    const n = 1 + rng.int(300);
    sign.push([rng.int(n + 1), n]);
  }
  const cases: number[][] = [];
  // No ties (continuous differences, some zeros dropped): exact for n <= 50.
  for (const n of [1, 2, 5, 9, 14, 20, 33, 50]) cases.push(Array.from({ length: n }, () => rng.normal() + 0.3));
  // Ties and large n: the normal approximation.
  for (const n of [8, 30, 60, 120, 400]) cases.push(Array.from({ length: n }, () => Math.round(4 * (rng.normal() + 0.2)) / 4));
  for (const n of [60, 200]) cases.push(Array.from({ length: n }, () => rng.normal() - 0.1));
  cases.push([0, 0, 1.5, -0.5, 2, 3, -1.25, 0.75]); // zeros dropped, no ties among the rest: exact
  const ours = cases.map((d) => wilcoxonSignedRank(d));
  const gam = [0.1, 0.5, 1, 1.5, 2, 3.7, 10, 51, 101, 481, 1001.5];

  const input = JSON.stringify({ sign, wilcoxon: cases.map((d, i) => [d.filter((x) => x !== 0), ours[i]!.method]), gammaln: gam });
  const r = available ? spawnSync(PYTHON, ['-c', SCRIPT], { input, encoding: 'utf8' }) : null;
  const ref = r && r.status === 0 ? (JSON.parse(r.stdout) as { sign: number[]; wilcoxon: [number, number][]; gammaln: number[] }) : null;

  it('SciPy ran', () => {
    expect(r?.status, r?.stderr).toBe(0);
  });

  it('ln Γ agrees with scipy.special.gammaln to 1e-12 relative', () => {
    gam.forEach((x, i) => expect(Math.abs(logGamma(x) - ref!.gammaln[i]!)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(ref!.gammaln[i]!))));
  });

  it('the sign test agrees with scipy.stats.binomtest (two-sided, p = 0.5) to 1e-9', () => {
    sign.forEach(([k, n], i) => {
      if (n === 0) return expect(signTest(k, n)).toBe(1); // binomtest refuses n = 0; ours: nothing to test, p = 1
      expect(Math.abs(signTest(k, n) - ref!.sign[i]!), `k ${k} n ${n}`).toBeLessThanOrEqual(1e-9);
    });
  });

  it('the Wilcoxon signed-rank test agrees with scipy.stats.wilcoxon (statistic exactly, p to 1e-6 relative)', () => {
    expect(ours.filter((o) => o.method === 'exact').length).toBeGreaterThanOrEqual(8);
    expect(ours.filter((o) => o.method === 'normal').length).toBeGreaterThanOrEqual(6);
    ours.forEach((o, i) => {
      const [stat, p] = ref!.wilcoxon[i]!;
      expect(o.statistic, `case ${i}`).toBeCloseTo(stat, 9);
      expect(Math.abs(o.p - p) / Math.max(p, 1e-300), `case ${i} (${o.method}): ours ${o.p}, SciPy ${p}`).toBeLessThanOrEqual(1e-6);
    });
  });
});
