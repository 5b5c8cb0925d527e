/**
 * An hour of 1 kHz data for two arms (3.6 M samples per series) renders to a bounded file:
 * a size check, not a timing check. It also checks that nothing that must survive was
 * dropped: every event is listed, every role change and hold is embedded, the markers say
 * they are binned. Writes test-output/report/hour.html (git-ignored).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { renderReport } from '../../src/report/html.js';
import { payloadOf } from './payload.js';
import { syntheticInput } from './synthetic.js';

describe('one hour at 1 kHz, two arms', () => {
  it('renders below 8 MB with all events, role changes and holds kept', () => {
    // Role switches every 0.5 s, each with an event: 7200 events per arm, above the marker limit.
    const input = syntheticInput(3600);
    expect(input.arms[0]!.rawForce.t.length).toBe(3_600_001);
    const html = renderReport(input);
    const bytes = Buffer.byteLength(html, 'utf8');
    console.log(`one-hour report: ${(bytes / 1e6).toFixed(2)} MB (${html.length} characters)`);
    expect(bytes).toBeLessThan(8e6);
    // Kept for a look by eye (test-output/ is git-ignored).
    mkdirSync('test-output/report', { recursive: true });
    writeFileSync('test-output/report/hour.html', html);

    const data = payloadOf(html);
    input.arms.forEach((arm, a) => {
      const rows = new RegExp(`<tbody id="events-${a}">([\\s\\S]*?)</tbody>`).exec(html)![1]!.match(/<tr /g)!.length;
      expect(rows).toBe(arm.events.length);
      expect(arm.events.length).toBeGreaterThan(7000);
      const role = data.plots.filter((p) => p.kind === 'role')[a]!.steps as { t: number[] };
      expect(role.t.length).toBe(7201);
      const events = data.plots.filter((p) => p.kind === 'events')[a]!;
      expect(events.binned).toBe(true);
    });
    expect((data.holds[0] as { iv: number[] }).iv.length).toBe(4); // the long hold and the one-sample hold
    expect(html).toContain('markers are drawn one per time column and kind, not one per event');
    for (const p of data.plots) for (const s of p.series ?? []) expect((s.mx ?? s.pt)!.length).toBeLessThanOrEqual(2000);
  });
});
