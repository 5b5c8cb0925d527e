/**
 * Review finding: legibility differed from its documentation. The code exaggerated away from
 * the uniform mean over all of the speaker's own-zone hypotheses; DEVELOPERS.md said "the
 * alternatives the listener still holds". Now the mean is over the hypotheses consistent with
 * what is committed (common knowledge on both arms). A speaker whose only private zone is
 * committed has no alternative left to tell apart, so it moves exactly as without legibility.
 * Our own synthetic poses near the demo cell's clamp post (invented data).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_OCCUPIED } from '../../src/core/arm-step.js';
import { SPEAKER } from '../../src/core/roles.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const base = loadCell('config/demo_cell.yaml').left.config;
const cfg = (gain: number): ArmConfig => ({ ...base, roles: { ...base.roles, period_s: 100 }, policy: { ...base.policy, legibility_gain: gain } });
const COMMITTED_OWN = 18; // index of committedOwn in ArmStepSnapshot.numbers

function speakerTwist(gain: number, committedOwn: number): number[] {
  const s = new ArmStep(cfg(gain));
  const clamp = s.config.task.zones.findIndex((z) => z.name === 'clamp_post');
  const view = new Uint8Array(s.config.task.zones.length);
  view[clamp] = ZONE_OCCUPIED;
  const w = new Float64Array(6);
  for (let k = 0; k < 2500; k++) {
    const t = k / 1000;
    if (k === 600) {
      const snap = s.snapshot();
      snap.numbers[COMMITTED_OWN] = committedOwn === 0 ? 0 : 1 << clamp;
      s.restore(snap);
    }
    s.setToolPose(t, 0.35, 0.55, 0.9, 0, 0, 0, 1);
    s.setZoneView(t, view);
    s.step(t, w);
  }
  expect(s.out.role).toBe(SPEAKER);
  return [s.out.twist[0]!, s.out.twist[1]!];
}

describe('review: legibility exaggerates only what the listener does not know yet', () => {
  it('with its private zone committed, the speaker moves as it would without legibility', () => {
    const plain = speakerTwist(0, 1);
    const legible = speakerTwist(0.8, 1);
    expect(legible[0]).toBeCloseTo(plain[0]!, 12);
    expect(legible[1]).toBeCloseTo(plain[1]!, 12);
  });

  it('with nothing committed, it exaggerates away from the alternatives', () => {
    const plain = speakerTwist(0, 0);
    const legible = speakerTwist(0.8, 0);
    expect(Math.hypot(legible[0]! - plain[0]!, legible[1]! - plain[1]!)).toBeGreaterThan(1e-3);
  });
});
