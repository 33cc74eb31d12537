/**
 * YAML with positions: the ECSV header and the binding file are YAML, and every complaint about
 * them must name the line and column where the user can fix it. Positions are 1-based and can be
 * mapped back to the file the YAML text was cut from (ECSV strips `# ` from each header line).
 */
import { LineCounter, isMap, isNode, isScalar, parseDocument, type Document } from 'yaml';

export interface Position {
  line: number;
  column: number;
}

export class YamlProblem extends Error {
  constructor(
    message: string,
    readonly position: Position,
  ) {
    super(message);
    this.name = 'YamlProblem';
  }
}

export interface ParsedYaml {
  doc: Document.Parsed;
  /** The document as plain data; `!!omap` maps become plain objects. */
  value: unknown;
  /** Where the node at `path` starts (or its nearest existing parent). */
  where(path: readonly (string | number)[]): Position;
  /** The position of a character offset in the text. */
  at(offset: number): Position;
  /** Where the key of the map entry at `path` starts: the place to point at for an unknown key. */
  whereKey(path: readonly (string | number)[]): Position;
}

/**
 * The yaml package's cap on alias expansion: plenty for hand-written YAML, far too little for an
 * alias bomb (nested anchors that expand exponentially). Only plain data is ever built: the
 * package's default (core) schema has no tag that runs code, and an unknown tag leaves a string
 * and a warning (the binding file refuses it; ECSV headers keep astropy's own tags).
 */
export const MAX_ALIAS_COUNT = 100;

/** Where the first alias is, for the message; the document start if none is found. */
function firstAlias(text: string, at: (offset: number) => Position): Position {
  const m = /(^|[\s,[{:])\*[^\s,\]}]+/m.exec(text);
  return at(m ? m.index + m[1].length : 0);
}

export function parseYaml(text: string, map: (p: Position) => Position = (p) => p): ParsedYaml {
  const lc = new LineCounter();
  const doc = parseDocument(text, { lineCounter: lc, prettyErrors: false, uniqueKeys: true });
  const at = (offset: number): Position => {
    const p = lc.linePos(offset);
    return map({ line: Math.max(1, p.line), column: Math.max(1, p.col) });
  };
  const problem = doc.errors[0];
  if (problem) {
    const first = problem.message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
    throw new YamlProblem(`not valid YAML: ${first}`, at(problem.pos[0]));
  }
  let value: unknown;
  try {
    value = plain(doc.toJS({ mapAsMap: false, maxAliasCount: MAX_ALIAS_COUNT }));
  } catch (err) {
    // The yaml package refuses alias chains that expand past the count (a "billion laughs" file).
    if (err instanceof ReferenceError || /alias/i.test((err as Error)?.message ?? '')) {
      throw new YamlProblem('not accepted: its aliases (*name) expand too far, as in an alias bomb; write the values out', firstAlias(text, at));
    }
    throw err;
  }
  return {
    doc,
    value,
    at,
    where(path) {
      for (let k = path.length; k >= 0; k--) {
        const node = k === 0 ? doc.contents : doc.getIn(path.slice(0, k), true);
        if (isNode(node) && node.range) return at(node.range[0]);
      }
      return map({ line: 1, column: 1 });
    },
    whereKey(path) {
      const parent = path.length === 1 ? doc.contents : doc.getIn(path.slice(0, -1), true);
      if (isMap(parent)) {
        const last = path[path.length - 1];
        const pair = parent.items.find((p) => isScalar(p.key) && p.key.value === last);
        if (pair && isNode(pair.key) && pair.key.range) return at(pair.key.range[0]);
      }
      return this.where(path);
    },
  };
}

/** `!!omap` comes back as a Map even with mapAsMap off; the callers want plain objects. */
function plain(v: unknown): unknown {
  if (v instanceof Map) return Object.fromEntries([...v].map(([k, x]) => [String(k), plain(x)]));
  if (Array.isArray(v)) return v.map(plain);
  if (v !== null && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, plain(x)]));
  return v;
}
