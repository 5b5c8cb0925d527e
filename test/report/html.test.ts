/**
 * The HTML report as text: one self-contained file, every input string escaped, every event
 * listed, every role change and hold embedded, the impact spike kept by the envelope.
 * Invented data (test/report/synthetic.ts); the browser test draws the same kind of input.
 */
import { describe, expect, it } from 'vitest';
import { escapeHtml, renderReport } from '../../src/report/html.js';
import type { ReportArm, ReportInput } from '../../src/report/types.js';
import { payloadOf, undelta } from './payload.js';
import { SYNTHETIC_CALIBRATION, syntheticArm, syntheticInput } from './synthetic.js';

const EVIL = '</script><script>alert(1)</script><img src=x onerror=alert(2)>"\'&amp;';

function emptyArm(name: string): ReportArm {
  const none = { t: new Float64Array(0), y: new Float64Array(0) };
  return {
    name,
    rawForce: none,
    correctionForce: none,
    impactForce: none,
    role: none,
    held: none,
    recommendedSpeed: none,
    measuredSpeed: none,
    hiddenZones: [],
    beliefT: new Float64Array(0),
    beliefMarginals: new Float64Array(0),
    events: [],
  };
}

describe('renderReport', () => {
  const input = syntheticInput(60);
  const html = renderReport(input);
  const data = payloadOf(html);

  it('is one self-contained file: no external URL, one script of code, a CSP without network sources', () => {
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(html).not.toMatch(/\b(src|href)\s*=\s*["']?(https?:|\/\/)/i);
    expect(html).not.toMatch(/url\(\s*["']?https?:/i);
    expect(html.match(/<script\b/g)?.length).toBe(2);
    expect(html).toContain(`content="default-src &#39;none&#39;; script-src &#39;sha256-`);
  });

  it('shows the summary, and the verdicts with a word and a sign', () => {
    for (const [k, v] of input.summary) expect(html).toContain(`<th scope="row">${k}</th><td>${v}</td>`);
    expect(html.match(/✓<\/span> PASS/g)?.length).toBe(2);
    expect(html.match(/✗<\/span> FAIL/g)?.length).toBe(1);
    expect(html).toContain('1 of 3 expectations failed; 2 passed.');
  });

  it('has per arm a force, role, events, belief and speed plot, then the internal force plot', () => {
    expect(data.plots.map((p) => p.kind)).toEqual(['xy', 'role', 'events', 'xy', 'xy', 'xy', 'role', 'events', 'xy', 'xy', 'xy']);
    expect(data.plots.filter((p) => p.y).map((p) => p.y!.label)).toEqual([
      'force (N)',
      'P(occupied)',
      'speed (m/s)',
      'force (N)',
      'P(occupied)',
      'speed (m/s)',
      'force (N)',
    ]);
    expect(html.match(/<canvas /g)?.length).toBe(11);
    // The legend names every series and zone.
    for (const label of ['raw (', 'correction band', 'impact band', 'clamp post occupied', 'cable-tray drop occupied', 'recommended', 'measured', 'speaker', 'listener', 'watchdog hold']) {
      expect(html).toContain(`</i>${label}`);
    }
  });

  it('embeds every role change and every watchdog hold exactly (a one-sample hold included)', () => {
    input.arms.forEach((arm, a) => {
      const role = data.plots.filter((p) => p.kind === 'role')[a]!.steps as { t: number[]; y: number[] };
      // Role switches every 0.5 s over 60 s: 120 changes after the first value.
      expect(role.t.length).toBe(121);
      const times = undelta(role.t, data.t0);
      times.forEach((t, k) => expect(t).toBeCloseTo(k * 0.5, 6));
      expect(role.y).toEqual(times.map((_, k) => k % 2));
      const holds = undelta((data.holds[a] as { iv: number[] }).iv, data.t0);
      const expected = a === 0 ? [36, 38.4, 48, 48.001] : [36.05, 38.45];
      expect(holds.length).toBe(expected.length);
      holds.forEach((t, k) => expect(t).toBeCloseTo(expected[k]!, 6));
      expect(arm.name).toBe(a === 0 ? 'left' : 'right');
    });
    // The internal force plot shades the union of both arms' holds.
    const union = undelta((data.holds[2] as { iv: number[] }).iv, data.t0);
    [36, 38.45, 48, 48.001].forEach((t, k) => expect(union[k]).toBeCloseTo(t, 6));
  });

  it('keeps the one-sample impact peak in the envelope (2000 columns over 60 s at 1 kHz)', () => {
    const force = data.plots[0]!;
    expect(force.series![2]!.mx!.length).toBe(2000);
    const peak = Math.max(...force.series![2]!.mx!.map((v) => v ?? -Infinity));
    let truePeak = 0;
    for (const v of input.arms[0]!.impactForce.y) truePeak = Math.max(truePeak, v);
    expect(peak).toBe(Number(truePeak.toPrecision(4)));
  });

  it('lists every event in a table row, in time order', () => {
    for (let a = 0; a < input.arms.length; a++) {
      const body = new RegExp(`<tbody id="events-${a}">([\\s\\S]*?)</tbody>`).exec(html)![1]!;
      const rows = body.match(/<tr /g) ?? [];
      expect(rows.length).toBe(input.arms[a]!.events.length);
      expect(html).toContain(`<h3>Events (${input.arms[a]!.events.length})</h3>`);
    }
  });

  it('escapes every input string; script data cannot close its element', () => {
    const arm = syntheticArm({
      name: EVIL,
      duration_s: 2,
      rate_hz: 100,
      seed: 3,
      impact_s: 1,
      hold: [1.2, 1.4],
      roleSwitch_s: 0.5,
      beliefRate_hz: 10,
      roleEvents: true,
      extraEvents: [{ t_s: 1.5, kind: EVIL, text: EVIL }],
    });
    const evil: ReportInput = {
      title: EVIL,
      subtitle: EVIL,
      summary: [[EVIL, EVIL]],
      arms: [{ ...arm, hiddenZones: [EVIL, 'tray'] }],
      checks: [{ name: EVIL, measured: EVIL, verdict: 'fail' }],
    };
    const out = renderReport(evil);
    expect(out).not.toContain('<script>alert');
    expect(out).not.toContain('<img');
    expect(out.match(/<script\b/g)?.length).toBe(2);
    expect(out.match(/<\/script>/g)?.length).toBe(2);
    expect(out).toContain(escapeHtml(EVIL));
    // The kind is drawn as a lane label from the data: it round-trips through the JSON.
    expect(payloadOf(out).plots.find((p) => p.kind === 'events')!.lanes).toContain(EVIL);
  });

  it('takes any event kind, even the name of an object property', () => {
    const arm = { ...emptyArm('left'), events: [{ t_s: 1, kind: 'constructor', text: 'a' }, { t_s: 2, kind: '__proto__', text: 'b' }] };
    const out = renderReport({ title: 't', subtitle: '', summary: [], arms: [arm] });
    expect(out).toContain('td.k0::before{background:#5a5f97}td.k1::before{background:#98582d}');
    expect(payloadOf(out).plots.find((p) => p.kind === 'events')!.lanes).toEqual(['__proto__', 'constructor']);
  });

  it('draws at most 12 event lanes; further kinds share the last one, and every event is still listed', () => {
    const events = Array.from({ length: 30 }, (_, i) => ({ t_s: i, kind: `kind-${String(i).padStart(2, '0')}`, text: `e${i}` }));
    const out = renderReport({ title: 't', subtitle: '', summary: [], arms: [{ ...emptyArm('left'), events }] });
    const lanes = payloadOf(out).plots.find((p) => p.kind === 'events')!;
    expect(lanes.lanes!.length).toBe(12);
    expect(lanes.lanes![11]).toBe('19 other kinds');
    expect(lanes.marks![11]!.length).toBe(19);
    expect(out.match(/<tr data-k=/g)?.length).toBe(30);
  });

  it('draws the reliability diagram: one bar and one dot per non-empty bin, bar height = observed frequency, the diagonal, a table of the bins', () => {
    const sec = /<section id="calibration">([\s\S]*?)<\/section>/.exec(html)![1]!;
    expect(html).toContain('<a href="#calibration">Calibration</a>');
    // 1000 pairs, ECE and the tail rate; the description is escaped.
    expect(sec).toContain('1000 pairs (listener updates of both arms &lt;b&gt;x&lt;/b&gt;); expected calibration error 0.123; P(truth) &lt; 0.05 in 1.25 % of the pairs.');
    const bars = [...sec.matchAll(/<rect class="bar" data-bin="(\d+)" data-count="(\d+)" x="[\d.]+" y="([\d.]+)" width="([\d.]+)" height="([\d.]+)"/g)];
    const full = SYNTHETIC_CALIBRATION.bins.filter((b) => b.count > 0);
    expect(bars.map((m) => Number(m[1]))).toEqual([0, 1, 2, 3, 4, 6, 7, 8, 9]);
    expect(bars.map((m) => Number(m[2]))).toEqual(full.map((b) => b.count));
    // The plot area is 250 px high (300 - 10 - 40): height / 250 is the observed frequency.
    bars.forEach((m, i) => expect(Number(m[5]) / 250).toBeCloseTo(full[i]!.observed_frequency!, 2));
    expect(sec.match(/<circle class="conf"/g)?.length).toBe(9);
    expect(sec).toContain('<line class="diagonal"');
    expect(sec.match(/<tr><td>/g)?.length).toBe(10);
    expect(sec).toContain('<tr><td>0.5–0.6</td><td>0</td><td>–</td><td>–</td></tr>');
    expect(renderReport({ ...input, calibration: undefined })).not.toContain('id="calibration"');
  });

  it('escapeHtml escapes the five HTML characters', () => {
    expect(escapeHtml(`<a href="x" title='y'>&</a>`)).toBe('&lt;a href=&quot;x&quot; title=&#39;y&#39;&gt;&amp;&lt;/a&gt;');
  });

  it('shows wall-clock times from the start of the data and says so', () => {
    const base = syntheticArm({
      name: 'left',
      duration_s: 10,
      rate_hz: 100,
      seed: 5,
      impact_s: 4,
      hold: [6, 7],
      roleSwitch_s: 0.5,
      beliefRate_hz: 10,
      roleEvents: false,
    });
    const shift = (s: { t: Float64Array; y: Float64Array }) => ({ t: s.t.map((v) => v + 1.7e9), y: s.y });
    const arm: ReportArm = {
      ...base,
      rawForce: shift(base.rawForce),
      correctionForce: shift(base.correctionForce),
      impactForce: shift(base.impactForce),
      role: shift(base.role),
      held: shift(base.held),
      recommendedSpeed: shift(base.recommendedSpeed),
      measuredSpeed: shift(base.measuredSpeed),
      beliefT: base.beliefT.map((v) => v + 1.7e9),
      events: base.events.map((e) => ({ ...e, t_s: e.t_s + 1.7e9 })),
    };
    const out = renderReport({ title: 't', subtitle: 's', summary: [], arms: [arm] });
    const d = payloadOf(out);
    expect(d.t0).toBe(0);
    expect(d.t1).toBeCloseTo(10, 6);
    expect(out).toContain('0 s is 1700000000.000000 s on the record');
    expect(out).toContain('<td>6.000</td><td class="k k0">trip</td>');
  });

  it('renders an arm without data, zones or events, and a report without arms', () => {
    const out = renderReport({ title: 'empty', subtitle: '', summary: [], arms: [emptyArm('left')] });
    expect(out).toContain('This arm has no zones hidden from it.');
    expect(out).toContain('No events.');
    expect(out).toContain('(no data)');
    const none = renderReport({ title: 'none', subtitle: '', summary: [], arms: [] });
    expect(payloadOf(none).plots).toEqual([]);
  });

  it('beyond the step limit draws a step series per column and says so', () => {
    const out = renderReport(syntheticInput(20, { roleEvents: false }), { stepLimit: 10, columns: 100 });
    const d = payloadOf(out);
    const role = d.plots.find((p) => p.kind === 'role')!.steps as { cm: number[] };
    expect(role.cm.length).toBe(100);
    // 0.5 s bands in 0.2 s columns: a column holds one role or, at a switch, both.
    expect(role.cm.every((m) => m === 1 || m === 2 || m === 3)).toBe(true);
    expect(role.cm.filter((m) => m === 3).length).toBeGreaterThan(0);
    expect(out).toContain('40 role changes: drawn per column');
  });
});
