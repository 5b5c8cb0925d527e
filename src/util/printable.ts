/**
 * Names from files (topic names, types, frame ids) are data: before they reach a terminal,
 * control characters and escape codes are shown as escapes (`\n`, `\t`, `\x1b`, `\u009b`), so a
 * crafted bag cannot move the cursor, recolour or rewrite what the user reads. A backslash is
 * doubled so the escaped text is unambiguous.
 */
const CONTROL = /[\u0000-\u001f\u007f-\u009f\u2028\u2029\\]/g;
const NAMED: Record<string, string> = { '\n': '\\n', '\r': '\\r', '\t': '\\t', '\\': '\\\\' };

export function printable(s: string): string {
  return s.replace(CONTROL, (c) => {
    const named = NAMED[c];
    if (named !== undefined) return named;
    const code = c.charCodeAt(0);
    return code < 0x100 ? `\\x${code.toString(16).padStart(2, '0')}` : `\\u${code.toString(16).padStart(4, '0')}`;
  });
}
