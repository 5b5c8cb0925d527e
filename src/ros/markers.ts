/**
 * visualization_msgs/msg/MarkerArray of one arm, at a low rate: the keep-out zones (coloured by
 * what this arm sees, or for the partner's zones by what it believes, opacity by probability),
 * the object estimate, the recommended twist as an arrow, the role as text and the nominal path
 * as a line strip. On a task with waypoints the zones are drawn as the solids they are, at their
 * heights (a box turned by its yaw, a vertical cylinder, a sphere) and the object at its height;
 * on a planar task (zones without heights) as flat footprints on the floor.
 *
 * Ids are stable (one per zone, fixed ids for the rest, namespaced per arm), every marker has a
 * lifetime of a few periods so markers of a stopped node disappear, and a marker that is not
 * shown any more (the arrow while the twist is zero) is deleted explicitly.
 */
import type { ArmOutputs } from '../core/arm-step.js';
import type { ArmConfig } from '../params/config.js';
import { isPlanar, taskPath, zoneSolid } from '../params/task-geometry.js';
import { SOLID_BOX, SOLID_CYLINDER } from '../geometry/solids.js';

/** visualization_msgs/msg/Marker constants (common practice: visualization_msgs/msg/Marker.msg). */
export const MARKER = { ARROW: 0, CUBE: 1, SPHERE: 2, CYLINDER: 3, LINE_STRIP: 4, TEXT_VIEW_FACING: 9, ADD: 0, DELETE: 2, DELETEALL: 3 } as const;

export const MARKER_IDS = { object: 100, twist: 200, role: 300, path: 400 } as const;
/** The path's line strip: a point every this much arc length (and at every waypoint's corner ends), m. */
export const PATH_MARKER_STEP_M = 0.05;
/** Height the planar task's object is drawn at, m (the demo cell's beam height). */
const PLANAR_OBJECT_Z_M = 0.9;

interface Color { r: number; g: number; b: number; a: number }
const seen = { free: { r: 0.2, g: 0.75, b: 0.3 }, occupied: { r: 0.9, g: 0.15, b: 0.1 }, unknown: { r: 0.6, g: 0.6, b: 0.6 } };

function stamp(t: number): { sec: number; nanosec: number } {
  const sec = Math.floor(t);
  return { sec, nanosec: Math.min(999_999_999, Math.round((t - sec) * 1e9)) };
}

export class MarkerBuilder {
  private arrowShown = false;
  readonly ns: string;
  private readonly planar: boolean;
  /** The path's points, computed once (cell frame). */
  private readonly pathPoints: { x: number; y: number; z: number }[];

  constructor(
    private readonly config: ArmConfig,
    private readonly frame: string,
    private readonly hidden: readonly number[],
    private readonly periodS: number,
  ) {
    this.ns = `antiphon_${config.arm}`;
    this.planar = isPlanar(config.task);
    const path = taskPath(config.task);
    const n = Math.max(1, Math.ceil(path.length / PATH_MARKER_STEP_M));
    const z0 = this.planar ? PLANAR_OBJECT_Z_M : 0;
    this.pathPoints = [];
    for (let k = 0; k <= n; k++) {
      path.locate((k / n) * path.length);
      this.pathPoints.push({ x: path.pos[0]!, y: path.pos[1]!, z: path.pos[2]! + z0 });
    }
  }

  get period_s(): number {
    return this.periodS;
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
  build(t: number, o: ArmOutputs, zones: ArrayLike<number>, objectZ = PLANAR_OBJECT_Z_M): { markers: object[] } {
    const markers: object[] = [];
    const task = this.config.task;
    task.zones.forEach((z, k) => {
      let m: ReturnType<MarkerBuilder['base']>;
      if (this.planar) {
        m = this.base(t, k + 1, z.shape === 'box' ? MARKER.CUBE : MARKER.CYLINDER, 'zones');
        m.pose.position = { x: z.center_m[0], y: z.center_m[1], z: 0.05 };
        m.scale = z.shape !== 'box' ? { x: 2 * z.radius_m, y: 2 * z.radius_m, z: 0.1 } : { x: z.size_m[0], y: z.size_m[1], z: 0.1 };
      } else {
        // The solid at its heights (RViz: a CUBE and a CYLINDER are centred on their pose, the cylinder's axis along its z).
        const q = zoneSolid(z, false);
        m = this.base(t, k + 1, q.kind === SOLID_BOX ? MARKER.CUBE : q.kind === SOLID_CYLINDER ? MARKER.CYLINDER : MARKER.SPHERE, 'zones');
        m.pose.position = { x: q.cx, y: q.cy, z: q.cz };
        if (q.kind === SOLID_BOX) {
          const yaw = Math.atan2(q.s, q.c);
          m.pose.orientation = { x: 0, y: 0, z: Math.sin(yaw / 2), w: Math.cos(yaw / 2) };
          m.scale = { x: 2 * q.hx, y: 2 * q.hy, z: 2 * q.hz };
        } else if (q.kind === SOLID_CYLINDER) m.scale = { x: 2 * q.r, y: 2 * q.r, z: 2 * q.hz };
        else m.scale = { x: 2 * q.r, y: 2 * q.r, z: 2 * q.r };
      }
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
    const oz = this.planar ? PLANAR_OBJECT_Z_M : objectZ;
    obj.pose.position = { x: o.objectX, y: o.objectY, z: oz };
    obj.scale = { x: 0.04, y: task.object.length_m, z: 0.04 };
    obj.color = { r: 0.75, g: 0.78, b: 0.82, a: 0.9 };
    markers.push(obj);
    const speed = Math.hypot(o.twist[0]!, o.twist[1]!, o.twist[2]!);
    if (speed > 0) {
      const a = this.base(t, MARKER_IDS.twist, MARKER.ARROW, 'twist');
      const from = { x: o.objectX, y: o.objectY, z: oz + 0.05 };
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
    txt.pose.position = { x: o.objectX, y: o.objectY, z: oz + 0.25 };
    txt.scale = { x: 0, y: 0, z: 0.08 };
    txt.text = `${this.config.arm}: ${o.held ? 'HOLD' : o.role === 0 ? 'speaker' : 'listener'}`;
    txt.color = o.held ? { r: 1, g: 0.2, b: 0.1, a: 1 } : { r: 1, g: 1, b: 1, a: 1 };
    markers.push(txt);
    const line = this.base(t, MARKER_IDS.path, MARKER.LINE_STRIP, 'path');
    line.points = this.pathPoints;
    line.scale = { x: 0.01, y: 0, z: 0 }; // a line strip's width is scale.x
    line.color = { r: 0.95, g: 0.8, b: 0.2, a: 0.9 };
    markers.push(line);
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
