/**
 * The lifecycle of the node that publishes the recommended twist (managed nodes, common
 * practice: the ROS 2 lifecycle design, primary states unconfigured, inactive, active,
 * finalized): the twist is exactly zero in every state but active.
 */
import { describe, expect, it, vi } from 'vitest';
import { startNodes } from '../../src/cli/node.js';
import { FakeRcl } from './fake-rcl.js';
import { cell, decodeVec, setup, withValues } from './harness.js';

const zero = [0, 0, 0, 0, 0, 0];

describe('lifecycle of /left/antiphon', () => {
  it('walks unconfigured -> inactive -> active -> inactive -> unconfigured -> finalized with the twist zero except when active', () => {
    const s = setup({ configure: false });
    const inf = s.nodes.inference;
    expect(inf.currentState.label).toBe('unconfigured');
    // Unconfigured: no subscription, no twist publisher: nothing moves.
    expect(s.rcl.node('antiphon_roles').subscriptions).toHaveLength(0);
    s.feed(0, 100);
    expect(s.twists).toHaveLength(0);

    expect(inf.configure().label).toBe('inactive');
    s.feed(0, 1500);
    // Inactive: inputs live (tared meanwhile), the twist published on every sample and exactly zero.
    expect(s.nodes.step!.out.tared).toBe(true);
    expect(s.twists.length).toBe(1500);
    expect(s.twists.every((b) => decodeVec(b).slice(2).every((x) => Object.is(x, 0)))).toBe(true);

    expect(inf.activate().label).toBe('active');
    s.feed(1500, 1500);
    expect(Math.hypot(...s.lastTwist().slice(2, 4))).toBeGreaterThan(0);

    const n = s.twists.length;
    expect(inf.deactivate().label).toBe('inactive');
    // Deactivate: a zero twist at once, and zero from then on.
    expect(s.twists.length).toBe(n + 1);
    expect(s.lastTwist().slice(2)).toEqual(zero);
    s.feed(3000, 500);
    expect(s.twists.slice(n).every((b) => decodeVec(b).slice(2).every((x) => Object.is(x, 0)))).toBe(true);
    // The 100 Hz tick while inputs stop publishes zero too.
    s.steady.s += 1;
    s.rcl.tickPeriod(10_000_000n);
    expect(s.lastTwist().slice(2)).toEqual(zero);

    expect(inf.cleanup().label).toBe('unconfigured');
    expect(s.rcl.node('antiphon_roles').subscriptions.every((x) => x.destroyed)).toBe(true);
    expect(s.nodes.step).toBeUndefined();
    const m = s.twists.length;
    s.feed(3500, 100);
    expect(s.twists.length).toBe(m);

    expect(inf.configure().label).toBe('inactive');
    s.feed(0, 100);
    expect(s.lastTwist().slice(2)).toEqual(zero);
    expect(inf.shutdown().label).toBe('finalized');
    expect(s.lastTwist().slice(2)).toEqual(zero);
  });

  it('activate is refused until the sensor is tared, with the reason in the log', () => {
    const s = setup();
    s.feed(0, 100);
    expect(s.nodes.inference.activate().label).toBe('inactive');
    expect(s.rcl.node('antiphon').logs.some((l) => l.startsWith('warn activate refused: the force-torque sensor is not tared'))).toBe(true);
    s.feed(100, 1000);
    expect(s.nodes.inference.activate().label).toBe('active');
  });

  it('configure refuses with every problem when the parameters do not pass the schema and the cross checks', () => {
    const s = setup({ configure: false, values: withValues('left', { 'policy.speed_m_s': 0.4, 'task.object.grasp_offset_m': 0.9 }) });
    expect(s.nodes.inference.configure().label).toBe('unconfigured');
    const err = s.rcl.node('antiphon').logs.find((l) => l.startsWith('error configure refused'))!;
    expect(err).toMatch(/policy\.speed_m_s = 0\.4 exceeds watchdog\.linear_speed_limit_m_s/);
    expect(err).toMatch(/grasp_offset_m = 0\.9 lies beyond the object's end/);
  });

  it('a held arm stays zero even when active', () => {
    const s = setup();
    s.feed(0, 1000);
    s.nodes.inference.activate();
    s.feed(1000, 10, { force: () => [400, 0, -11.8, 0, 0, 0] });
    s.feed(1010, 100);
    expect(s.lastTwist().slice(2)).toEqual(zero);
  });
});

describe('autostart (launch argument autostart:=true, --autostart)', () => {
  it('configures by itself, then tries to activate until tared; the cell bringup is not needed', async () => {
    vi.useFakeTimers();
    try {
      const rcl = new FakeRcl();
      const live = await startNodes(rcl, 'left', cell.left, [], { autostart: true });
      expect(live.nodes.state).toBe('unconfigured');
      vi.advanceTimersByTime(500);
      expect(live.nodes.state).toBe('inactive');
      vi.advanceTimersByTime(1000); // no wrench yet: not tared, activation refused (and retried)
      expect(live.nodes.state).toBe('inactive');
      expect(rcl.node('antiphon').logs.filter((l) => l.startsWith('warn activate refused')).length).toBe(2);
      const stopped = live.stop('test');
      vi.advanceTimersByTime(300);
      await stopped;
      expect(live.nodes.state).toBe('finalized');
    } finally {
      vi.useRealTimers();
    }
  });
});
