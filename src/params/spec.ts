/**
 * The parameter schema's vocabulary. Every parameter antiphon reads is one `ParamSpec`
 * in `schema.ts`: the YAML loader, `check-config`, the ROS parameter declarations and the
 * docs table are all derived from that one list.
 */

/** ROS 2 parameter types we use (rcl_interfaces/ParameterType names). */
export type ParamType = 'double' | 'integer' | 'bool' | 'string' | 'double_array' | 'string_array';

export type ParamValue = number | boolean | string | number[] | string[];

export interface ParamSpec {
  /**
   * Dotted name as ROS flattens nested maps, e.g. `wrench_filter.cutoff_hz`. A `*` segment
   * matches one user-chosen name (e.g. `task.zones.*.shape` for each named zone).
   */
  readonly key: string;
  readonly type: ParamType;
  /** SI unit (`Hz`, `N`, `N*m`, `m/s`, `rad/s`, `s`, `kg`, `m`), `1` for dimensionless, '' for none. */
  readonly unit: string;
  /** Default; `undefined` means the key is required wherever its pattern applies. */
  readonly default: ParamValue | undefined;
  /** Per-arm defaults, where the two arms must differ (e.g. the alternating phase). */
  readonly armDefault?: { readonly left: ParamValue; readonly right: ParamValue };
  /** Allowed range (inclusive) for numbers and for every element of number arrays. */
  readonly min?: number;
  readonly max?: number;
  /**
   * Hard safety ceiling: a value above it is refused whatever a file says. Changing a ceiling
   * is a code change that goes with the cell's risk assessment, never a configuration choice.
   */
  readonly ceiling?: number;
  /** Allowed strings for enumerations. */
  readonly choices?: readonly string[];
  /** Exact length for arrays. */
  readonly length?: number;
  readonly description: string;
}

/** Where a resolved value came from. */
export interface ValueSource {
  readonly kind: 'default' | 'file';
  readonly file?: string;
  /** The parameters-file section it came from: `/**`, `left`, `right`. */
  readonly section?: string;
  readonly line?: number;
  readonly column?: number;
}

export interface ResolvedValue {
  readonly key: string;
  readonly value: ParamValue;
  readonly source: ValueSource;
  readonly spec: ParamSpec;
}

export type ArmName = 'left' | 'right';
export const ARMS: readonly ArmName[] = ['left', 'right'];
