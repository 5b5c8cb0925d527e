/**
 * visualization_msgs/msg/MarkerArray of one arm, at a low rate: the keep-out zones (coloured by
 * what this arm sees, or for the partner's zones by what it believes, opacity by probability),
 * the object estimate, the recommended twist as an arrow and the role as text.
 *
 * Ids are stable (one per zone, fixed ids for the rest, namespaced per arm), every marker has a
 * lifetime of a few periods so markers of a stopped node disappear, and a marker that is not
 * shown any more (the arrow while the twist is zero) is deleted explicitly.
 */
import type { ArmOutputs } from '../core/arm-step.js';
import type { ArmConfig } from '../params/config.js';

/** visualization_msgs/msg/Marker constants (common practice: visualization_msgs/msg/Marker.msg). */
export const MARKER = { ARROW: 0, CUBE: 1, CYLINDER: 3, TEXT_VIEW_FACING: 9, ADD: 0, DELETE: 2, DELETEALL: 3 } as const;

export const MARKER_IDS = { object: 100, twist: 200, role: 300 } as const;

interface Color { r: number; g: number; b: number; a: number }
const seen = { free: { r: 0.2, g: 0.75, b: 0.3 }, occupied: { r: 0.9, g: 0.15, b: 0.1 }, unknown: { r: 0.6, g: 0.6, b: 0.6 } };

function stamp(t: number): { sec: number; nanosec: number } {
  const sec = Math.floor(t);
  return { sec, nanosec: Math.min(999_999_999, Math.round((t - sec) * 1e9)) };
}

export class MarkerBuilder {
  private arrowShown = false;
  readonly ns: string;

  constructor(
    private readonly config: ArmConfig,
    private readonly frame: string,
    private readonly hidden: readonly number[],
    private readonly periodS: number,
  ) {
    this.ns = `antiphon_${config.arm}`;
  }

  private base(t: number, id: number, type: number, sub: string) {
    const lifetime = Math.max(1, Math.ceil(3 * this.periodS));
    return {
      header: { stamp: stamp(t), frame_id: this.frame },
      ns: `${this.ns}/${sub}`,
      id,
      type,
      action: MARKER.ADD as number,
      pose: { position: { x: 0, y: 0, z: 0 }, orientation: { x: 0, y: 0, z: 0, w: 1 } },
      scale: { x: 1, y: 1, z: 1 },
      color: { r: 1, g: 1, b: 1, a: 1 } as Color,
      lifetime: { sec: lifetime, nanosec: 0 },
      frame_locked: false,
      points: [] as { x: number; y: number; z: number }[],
      colors: [],
      text: '',
      mesh_resource: '',
      mesh_use_embedded_materials: false,
    };
  }

  /** The markers for one period. `zones` holds this arm's own view (ZoneView states, task order). */
  build(t: number, o: ArmOutputs, zones: ArrayLike<number>): { markers: object[] } {
    const markers: object[] = [];
    const task = this.config.task;
    task.zones.forEach((z, k) => {
      const m = this.base(t, k + 1, z.shape === 'circle' ? MARKER.CYLINDER : MARKER.CUBE, 'zones');
      m.pose.position = { x: z.center_m[0], y: z.center_m[1], z: 0.05 };
      m.scale = z.shape === 'circle' ? { x: 2 * z.radius_m, y: 2 * z.radius_m, z: 0.1 } : { x: z.size_m[0], y: z.size_m[1], z: 0.1 };
      const h = this.hidden.indexOf(k);
      if (h >= 0) {
        // Only the partner sees it: what this arm believes, opacity by the probability.
        const p = o.hiddenOccupied[h] ?? 0.5;
        m.color = { ...seen.occupied, a: 0.1 + 0.8 * p };
      } else {
        const s = zones[k];
        m.color = { ...(s === 0 ? seen.free : s === 1 ? seen.occupied : seen.unknown), a: 0.8 };
      }
      m.text = z.name;
      markers.push(m);
    });
    const obj = this.base(t, MARKER_IDS.object, MARKER.CUBE, 'object');
    obj.pose.position = { x: o.objectX, y: o.objectY, z: 0.9 };
    obj.scale = { x: 0.04, y: task.object.length_m, z: 0.04 };
    obj.color = { r: 0.75, g: 0.78, b: 0.82, a: 0.9 };
    markers.push(obj);
    const speed = Math.hypot(o.twist[0]!, o.twist[1]!, o.twist[2]!);
    if (speed > 0) {
      const a = this.base(t, MARKER_IDS.twist, MARKER.ARROW, 'twist');
      const from = { x: o.objectX, y: o.objectY, z: 0.95 };
      // 1 m of arrow per 0.25 m/s.
      a.points = [from, { x: from.x + 4 * o.twist[0]!, y: from.y + 4 * o.twist[1]!, z: from.z + 4 * o.twist[2]! }];
      a.scale = { x: 0.02, y: 0.04, z: 0.06 };
      a.color = { r: 0.1, g: 0.4, b: 0.95, a: 1 };
      markers.push(a);
      this.arrowShown = true;
    } else if (this.arrowShown) {
      const d = this.base(t, MARKER_IDS.twist, MARKER.ARROW, 'twist');
      d.action = MARKER.DELETE;
      markers.push(d);
      this.arrowShown = false;
    }
    const txt = this.base(t, MARKER_IDS.role, MARKER.TEXT_VIEW_FACING, 'role');
    txt.pose.position = { x: o.objectX, y: o.objectY, z: 1.15 };
    txt.scale = { x: 0, y: 0, z: 0.08 };
    txt.text = `${this.config.arm}: ${o.held ? 'HOLD' : o.role === 0 ? 'speaker' : 'listener'}`;
    txt.color = o.held ? { r: 1, g: 0.2, b: 0.1, a: 1 } : { r: 1, g: 1, b: 1, a: 1 };
    markers.push(txt);
    return { markers };
  }

  /** Remove every marker of this arm (on cleanup and shutdown). */
  clear(t: number): { markers: object[] } {
    const m = this.base(t, 0, MARKER.CUBE, 'zones');
    m.action = MARKER.DELETEALL;
    // An empty namespace: every marker on this topic (visualization_msgs/msg/Marker.msg).
    m.ns = '';
    this.arrowShown = false;
    return { markers: [m] };
  }
}
