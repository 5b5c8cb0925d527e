/**
 * The coupling constant of the simulated cell, calibrated from a recorded episode (common
 * practice: fit the model's constant from a log of the cell) and compared with the value the
 * admittance gives in the quasi-static limit (handbook mechanics: c = D / 2 for two equal
 * dampers holding one rigid body).
 */
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { fitCoupling } from '../../src/sim/calibrate.js';
import { runEpisode } from '../../src/sim/episode.js';
import { simOptions } from '../../src/sim/options.js';

describe('coupling calibration', () => {
  it('a fit over a whole alternating episode gives c near D / 2 and a residual well inside the belief noise', async () => {
    const cell = loadCell('config/demo_cell.yaml');
    const r = await runEpisode({ left: cell.left.config, right: cell.right.config, strategy: { name: 'alternating', k: 500 }, seed: 7, duration_s: 12 });
    const fit = fitCoupling(r.record!);
    const D = simOptions().admittance_damping_n_s_m;
    expect(fit.dv_rms_m_s).toBeGreaterThan(0.005); // the roles disagreed enough to fit anything
    // Below D/2 by the admittance lag (apparent mass over damping, tens of ms) and the correction filter; within 15 %.
    expect(fit.c_n_s_m).toBeGreaterThan(0.85 * (D / 2));
    expect(fit.c_n_s_m).toBeLessThan(1.02 * (D / 2));
    // The configured value of the demo cell is the quasi-static one.
    expect(cell.left.config.coupling.damping_n_s_m).toBe(D / 2);
    expect(fit.residual_sd_n).toBeLessThan(cell.left.config.belief.noise_force_n);
  });

  it('the six-joint arm gives the same quasi-static constant; its larger apparent mass lowers the fitted one more', async () => {
    const cell = loadCell('config/demo_cell.yaml');
    const r = await runEpisode({ left: cell.left.config, right: cell.right.config, strategy: { name: 'alternating', k: 500 }, seed: 7, duration_s: 10, options: { arm_model: 'six_joint', record: true } });
    const fit = fitCoupling(r.record!);
    const D = simOptions().admittance_damping_n_s_m;
    expect(fit.c_n_s_m).toBeGreaterThan(0.7 * (D / 2));
    expect(fit.c_n_s_m).toBeLessThan(1.02 * (D / 2));
    expect(fit.residual_sd_n).toBeLessThan(cell.left.config.belief.noise_force_n);
  });
});
