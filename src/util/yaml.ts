/**
 * YAML parsing with bounds for every YAML input (parameters, expectations, model files).
 *
 * - Size: the files are read through `readInputText` with a documented limit (read-input.ts).
 * - Duplicate keys: the `yaml` package's own check compares each new key with every key before
 *   it in the same map, which is quadratic (20,000 keys took 6 s). Here the package's check is
 *   off and one pass over the parsed document finds duplicates with a set per map: linear. A
 *   duplicate is reported exactly as the package would ("Map keys must be unique" at the key).
 * - Aliases: converting to plain values expands aliases; `YAML_MAX_ALIAS_COUNT` bounds that
 *   expansion (the package counts the nodes an alias brings in), so a few anchors reused
 *   normally work and a "billion laughs" document is refused.
 */
import { isScalar, LineCounter, parseDocument, visit, YAMLParseError, type Document, type DocumentOptions, type ParseOptions, type SchemaOptions } from 'yaml';
import { InputError, type Place, type Problem } from './errors.js';

/** Bound on alias expansion when a document becomes plain values (`toJS({ maxAliasCount })`). */
export const YAML_MAX_ALIAS_COUNT = 10_000;

type Options = ParseOptions & DocumentOptions & SchemaOptions;

/** `parseDocument` with linear-time duplicate-key detection (unless `uniqueKeys: false`). */
export function parseYamlDocument(text: string, options: Options = {}): Document.Parsed {
  const unique = options.uniqueKeys !== false;
  const doc = parseDocument(text, { ...options, uniqueKeys: false });
  if (unique) {
    const found: YAMLParseError[] = [];
    visit(doc, {
      Map(_, map) {
        const seen = new Set<unknown>();
        for (const pair of map.items) {
          const key = pair.key;
          if (!isScalar(key)) continue;
          const v = key.value;
          if (seen.has(v)) {
            const at = key.range?.[0] ?? 0;
            found.push(new YAMLParseError([at, at + 1], 'DUPLICATE_KEY', 'Map keys must be unique'));
          } else seen.add(v);
        }
      },
    });
    if (found.length) {
      doc.errors.push(...found);
      doc.errors.sort((a, b) => a.pos[0] - b.pos[0]);
    }
  }
  return doc;
}

/** A place in an input file. */
export type FilePlace = Place & { file: string };

/**
 * A document of an input file whose problems name their place: `parseYamlDocument` with a line
 * counter, every syntax error reported at once as `<syntaxCode>` with file, line and column
 * (thrown as one InputError), and `at(node)`, the file:line:col of a node for later problems.
 */
export function parseYamlInput(text: string, path: string, syntaxCode: string, options: Options = {}): { doc: Document.Parsed; at: (node: unknown) => FilePlace } {
  const lc = new LineCounter();
  const doc = parseYamlDocument(text, { ...options, lineCounter: lc, prettyErrors: false });
  const at = (node: unknown): FilePlace => {
    const range = (node as { range?: [number, number, number] } | null | undefined)?.range;
    if (!range) return { file: path };
    const p = lc.linePos(range[0]);
    return { file: path, line: p.line, column: p.col };
  };
  const problems: Problem[] = doc.errors.map((err) => {
    const p = lc.linePos(err.pos[0]);
    return { code: syntaxCode, message: `YAML syntax: ${err.message.split('\n')[0]}`, where: { file: path, line: p.line, column: p.col } };
  });
  if (problems.length) throw new InputError(problems);
  return { doc, at };
}

/** Plain values of a document with bounded alias expansion; `undefined` plus a message when the bound is hit. */
export function yamlToJs(doc: Document.Parsed): { ok: true; value: unknown } | { ok: false; message: string } {
  try {
    return { ok: true, value: doc.toJS({ maxAliasCount: YAML_MAX_ALIAS_COUNT }) };
  } catch (err) {
    if (err instanceof ReferenceError || err instanceof RangeError) {
      return { ok: false, message: `aliases expand to more than ${YAML_MAX_ALIAS_COUNT} nodes (or refer to themselves): ${err.message}` };
    }
    throw err;
  }
}
