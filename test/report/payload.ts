/** Reads back the data a rendered report embeds for its script (test helper). */

export interface Payload {
  t0: number;
  t1: number;
  cols: number;
  holds: ({ iv: number[] } | { cm: number[] })[];
  plots: {
    kind: 'xy' | 'role' | 'events';
    holds: number[];
    y?: { label: string; lo: number; hi: number };
    series?: { c: string; mn?: (number | null)[]; mx?: (number | null)[]; pt?: number[]; py?: (number | null)[] }[];
    lanes?: string[];
    steps?: { t: number[]; y: (number | null)[]; end: number } | { cm: number[] };
    binned?: boolean;
    marks?: number[][];
  }[];
}

export function payloadOf(html: string): Payload {
  const m = /<script type="application\/json" id="antiphon-data">([\s\S]*?)<\/script>/.exec(html);
  if (!m) throw new Error('no data element in the report');
  return JSON.parse(m[1]!) as Payload;
}

/** Difference-coded microseconds back to seconds after t0. */
export function undelta(a: readonly number[], t0: number): number[] {
  let s = 0;
  return a.map((d) => ((s += d), t0 + s / 1e6));
}
