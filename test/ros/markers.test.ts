/**
 * Markers (visualization_msgs/msg/MarkerArray; field names and the ARROW/CUBE/CYLINDER/
 * TEXT_VIEW_FACING/ADD/DELETE/DELETEALL values from visualization_msgs/msg/Marker.msg, common
 * practice): the cell frame, stable ids, a lifetime, deletion of stale markers, and the
 * shipped RViz configuration showing them.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { MARKER, MARKER_IDS } from '../../src/ros/markers.js';
import { activateAfterTare, setup } from './harness.js';

interface M { header: { frame_id: string }; ns: string; id: number; type: number; action: number; color: { a: number }; lifetime: { sec: number }; text: string; scale: { x: number } }
const MARKERS_NS = 500_000_000n; // 2 Hz, ros.markers.rate_hz

describe('markers', () => {
  it('zones, the object, the twist arrow and the role, in the cell frame, with stable ids', () => {
    const s = setup();
    activateAfterTare(s);
    s.feed(1000, 1000);
    s.rcl.tickPeriod(MARKERS_NS);
    const a = (s.rcl.sent('/left/antiphon/markers').at(-1) as { markers: M[] }).markers;
    expect(a.every((m) => m.header.frame_id === 'cell')).toBe(true);
    expect(a.map((m) => [m.ns, m.id, m.type])).toEqual([
      ['antiphon_left/zones', 1, MARKER.CYLINDER], // clamp_post (the left sensor sees it)
      ['antiphon_left/zones', 2, MARKER.CUBE], // tray_drop (only the partner sees it: belief)
      ['antiphon_left/object', MARKER_IDS.object, MARKER.CUBE],
      ['antiphon_left/twist', MARKER_IDS.twist, MARKER.ARROW],
      ['antiphon_left/role', MARKER_IDS.role, MARKER.TEXT_VIEW_FACING],
      ['antiphon_left/path', MARKER_IDS.path, MARKER.LINE_STRIP],
    ]);
    expect(a.every((m) => m.lifetime.sec >= 1 && m.action === MARKER.ADD)).toBe(true);
    expect(a[1]!.color.a).toBeGreaterThan(0.1); // opacity from the belief's occupied probability
    expect(a[4]!.text).toMatch(/^left: (speaker|listener)$/);
    s.rcl.tickPeriod(MARKERS_NS);
    const b = (s.rcl.sent('/left/antiphon/markers').at(-1) as { markers: M[] }).markers;
    expect(b.map((m) => m.id)).toEqual(a.map((m) => m.id));
  });

  it('a marker no longer shown is deleted (the arrow when the twist drops to zero), and cleanup deletes all', () => {
    const s = setup();
    activateAfterTare(s);
    s.feed(1000, 1000);
    s.rcl.tickPeriod(MARKERS_NS);
    s.nodes.inference.deactivate();
    s.feed(2000, 10, { force: () => [400, 0, -11.8, 0, 0, 0] }); // a hold: twist zero
    s.rcl.tickPeriod(MARKERS_NS);
    const c = (s.rcl.sent('/left/antiphon/markers').at(-1) as { markers: M[] }).markers;
    expect(c.find((m) => m.id === MARKER_IDS.twist)).toMatchObject({ action: MARKER.DELETE });
    expect(c.find((m) => m.id === MARKER_IDS.role)!.text).toBe('left: HOLD');
    s.rcl.tickPeriod(MARKERS_NS);
    expect((s.rcl.sent('/left/antiphon/markers').at(-1) as { markers: M[] }).markers.some((m) => m.id === MARKER_IDS.twist)).toBe(false);
    s.nodes.inference.cleanup();
    expect((s.rcl.sent('/left/antiphon/markers').at(-1) as { markers: M[] }).markers).toEqual([expect.objectContaining({ action: MARKER.DELETEALL, ns: '' })]);
  });

  it('the shipped RViz config shows both arms\' markers in the cell frame, with the topic QoS the node offers', () => {
    const r = parse(readFileSync('rviz/antiphon.rviz', 'utf8'));
    expect(r['Visualization Manager']['Global Options']['Fixed Frame']).toBe('cell');
    const arrays = r['Visualization Manager'].Displays.filter((d: { Class: string }) => d.Class === 'rviz_default_plugins/MarkerArray');
    expect(arrays.map((d: { Topic: { Value: string } }) => d.Topic.Value)).toEqual(['/left/antiphon/markers', '/right/antiphon/markers']);
    const s = setup();
    expect(arrays[0].Topic['Reliability Policy'].toLowerCase()).toBe(s.rcl.topic('/left/antiphon/markers').qos.reliability);
  });

  it('ros.markers.rate_hz = 0 turns the markers off', async () => {
    const { withValues } = await import('./harness.js');
    const s = setup({ values: withValues('left', { 'ros.markers.rate_hz': 0 }) });
    expect(() => s.rcl.topic('/left/antiphon/markers')).toThrow(/nobody publishes/);
  });
});
