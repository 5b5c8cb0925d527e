/**
 * Text and number encoding for the HTML report: escaping of every input string, compact
 * numbers (4 significant digits) and JSON that is safe inside a <script> element.
 */

const HTML_ESCAPES: Record<string, string> = {
  '&': '&amp;',
  '<': '&lt;',
  '>': '&gt;',
  '"': '&quot;',
  "'": '&#39;',
};

/** Escapes text for HTML element content and quoted attribute values. */
export function escapeHtml(text: unknown): string {
  return String(text).replace(/[&<>"']/g, (c) => HTML_ESCAPES[c]!);
}

/**
 * JSON for a `<script type="application/json">` element: `<`, `>`, `&` and the two JS line
 * separators are written as \u escapes, so no input string can close the element or open a
 * comment; JSON.parse gives back the same strings.
 */
export function scriptJson(value: unknown): string {
  return JSON.stringify(value).replace(/[<>&\u2028\u2029]/g, (c) => '\\u' + c.charCodeAt(0).toString(16).padStart(4, '0'));
}

/** A number rounded to 4 significant digits in its shortest text; `null` when not finite. */
export function num4(v: number): string {
  if (!Number.isFinite(v)) return 'null';
  if (v === 0) return '0';
  return String(Number(v.toPrecision(4)));
}

/** A JSON array text of numbers rounded to 4 significant digits (non-finite as null). */
export function numArray4(a: ArrayLike<number>): string {
  const parts = new Array<string>(a.length);
  for (let i = 0; i < a.length; i++) parts[i] = num4(a[i]!);
  return '[' + parts.join(',') + ']';
}

/**
 * Times as whole microseconds after `origin`, each written as the difference to the previous
 * one (exact integer arithmetic, so no rounding error builds up). The page adds them back up.
 */
export function microDeltas(times: ArrayLike<number>, origin: number): number[] {
  const out = new Array<number>(times.length);
  let prev = 0;
  for (let i = 0; i < times.length; i++) {
    const q = Math.round((times[i]! - origin) * 1e6);
    out[i] = q - prev;
    prev = q;
  }
  return out;
}

/** Seconds with millisecond digits for tables: `12.345`; an em dash when not finite. */
export function seconds3(v: number): string {
  return Number.isFinite(v) ? v.toFixed(3) : '—';
}
