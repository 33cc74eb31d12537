/**
 * What starsieve writes cannot be steered by what it reads: catalog strings are escaped in the
 * HTML report, input paths are percent-encoded in SARIF, no catalog or configuration value names
 * a file to write, binding files are data (never code), and there is no way to load code from a
 * path the user did not name. (test/cli/reports.test.ts already checks ids and a column name in
 * the HTML; these go further: every tag and attribute, notes, messages, the path itself.)
 */
import { existsSync, mkdirSync, readFileSync, readdirSync, statSync, writeFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { pathToFileURL } from 'node:url';
import { describe, expect, it } from 'vitest';
import { BindingError } from '../../cli/binding/types.js';
import { parseBindingFile } from '../../cli/binding/binding-file.js';
import { REPO, cli, tempDir } from '../helpers/cli.js';
import { STACK_FRAME } from './run-cli.js';

/** Tag and attribute names in a page (outside the inline CSS). */
function markup(page: string): { tags: Set<string>; attrs: Set<string> } {
  const body = page.replace(/<style>[\s\S]*?<\/style>/, '');
  const tags = new Set([...body.matchAll(/<\/?([a-zA-Z][\w:-]*)/g)].map((m) => m[1].toLowerCase()));
  const attrs = new Set<string>();
  for (const tag of body.matchAll(/<[a-zA-Z][^>]*>/g)) for (const a of tag[0].matchAll(/\s([a-zA-Z][\w:-]*)=/g)) attrs.add(a[1].toLowerCase());
  return { tags, attrs };
}

/**
 * Every tag and attribute the report itself writes (those of the demo catalog's report, and no
 * event handler or link among them). A new one in cli/reports/html.ts belongs here too.
 */
const ALLOWED_TAGS = new Set(
  'b body circle clippath code defs div g h1 h2 h3 head html li line meta p path polygon rect span style svg table tbody td text th thead title tr ul'.split(' '),
);
const ALLOWED_ATTRS = new Set(
  'aria-label charset class clip-path content cx cy d fill fill-opacity font-size font-weight height http-equiv id lang name points r role stroke stroke-dasharray stroke-width text-anchor transform viewbox width x x1 x2 xmlns y y1 y2'.split(' '),
);

const HOSTILE = ['<script>alert(1)</script>', '<img src=x onerror=alert(2)>', '"><svg onload=alert(3)>', "'><iframe src=javascript:alert(4)>"];
/** Names a careless writer might turn into a path. */
const TRAVERSAL = ['../../escape.json', '/tmp/starsieve-escape-test.json', '..\\..\\escape.json', 'out/../../escape.json'];

/** Every file under `dir`, relative to it. */
function tree(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    for (const f of readdirSync(d)) {
      const p = join(d, f);
      if (statSync(p).isDirectory()) walk(p);
      else out.push(relative(dir, p));
    }
  };
  walk(dir);
  return out.sort();
}

describe('a catalog full of markup and paths, in a folder whose name needs encoding', () => {
  const d = tempDir();
  const sub = join(d, '<b onclick=alert(6)> 100%', 'ünï?#');
  mkdirSync(sub, { recursive: true });
  const cat = join(sub, '<i onmouseover=alert(5)>.csv');
  const q = (s: string) => `"${s.replace(/"/g, '""')}"`;
  writeFileSync(
    cat,
    [
      ['id', 'mass_Msun', 'lum_Lsun', 'teff_K', 'radius_Rsun', q(HOSTILE[0]), q(HOSTILE[0]), q(HOSTILE[1]), ...TRAVERSAL.map(q)].join(','),
      // Cells quoted back in messages: text in a number column, a ragged row, luminous stars.
      [q(HOSTILE[2]), q(HOSTILE[3]), '1', '5772', '1', 'a', 'b', 'c', ...TRAVERSAL.map(q)].join(','),
      [q(HOSTILE[0]), '1', '70000', '5772', '1', 'a', 'b', 'c', ...TRAVERSAL.map(q)].join(','),
      [q(HOSTILE[1]), '1', '1', '5772', '1', q(HOSTILE[1]), 'b', 'c', ...TRAVERSAL.map(q), q(HOSTILE[0])].join(','),
      [q(TRAVERSAL[0]), '1', '1', '5772', '1', 'x', 'y', 'z', ...TRAVERSAL.map(q)].join(','),
    ].join('\n') + '\n',
  );
  const binding = join(d, 'binding.yaml');
  writeFileSync(binding, `starsieve-binding: 1\ndescription: ../../escape.json\ncolumns:\n  "${TRAVERSAL[0]}": none\n  mass_Msun: { quantity: mass, unit: solMass, description: /tmp/starsieve-escape-test.json }\n`);
  const out = join(d, 'out');
  mkdirSync(out);
  const before = tree(d);
  const r = cli(['check', cat, '--binding', binding, '--report', join(out, 'r.json'), '--sarif', join(out, 'r.sarif'), '--html', join(out, 'r.html'), '--html-rows', '100', '--quiet', '--fail-on', 'never']);

  it('runs', () => {
    expect(r.code, r.stderr).toBe(0);
  });

  it('HTML: no catalog string (ids, column names, quoted cells, notes, the file name) adds a tag or an attribute', () => {
    const page = readFileSync(join(out, 'r.html'), 'utf8');
    const got = markup(page);
    expect([...got.tags].filter((t) => !ALLOWED_TAGS.has(t))).toEqual([]);
    expect([...got.attrs].filter((a) => !ALLOWED_ATTRS.has(a))).toEqual([]);
    // `javascript:` may appear as escaped text; inside a real tag it never does.
    expect([...page.matchAll(/<[a-zA-Z][^>]*>/g)].filter((t) => /javascript:/i.test(t[0]))).toEqual([]);
    // The hostile strings are there, escaped: the page shows them, it does not run them.
    expect(page).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(page).toContain('&lt;i onmouseover=alert(5)&gt;.csv');
    expect(page).toContain('&quot;&gt;&lt;svg onload=alert(3)&gt;');
  });

  it('SARIF: the artifact URI is a percent-encoded relative reference that resolves to the input file', () => {
    const run = JSON.parse(readFileSync(join(out, 'r.sarif'), 'utf8')).runs[0];
    const base: string = run.originalUriBaseIds.SRCROOT.uri;
    expect(base).toBe(pathToFileURL(REPO + '/').href);
    const uris = new Set<string>(run.results.map((x: { locations: { physicalLocation: { artifactLocation: { uri: string } } }[] }) => x.locations[0].physicalLocation.artifactLocation.uri));
    expect(uris.size).toBe(1);
    const uri = [...uris][0];
    // RFC 3986: a relative reference holds no raw space, %, ?, # or non-ASCII character.
    expect(uri).toMatch(/^[A-Za-z0-9\-._~!$&'()*+,;=:@/%]+$/);
    expect(uri).not.toMatch(/%(?![0-9A-F]{2})/);
    expect(decodeURIComponent(new URL(uri, base).pathname)).toBe(cat);
  });

  it('files are written only where the command line said: no id, column name, cell or binding entry names one', () => {
    expect(tree(d)).toEqual([...before, 'out/r.html', 'out/r.json', 'out/r.sarif'].sort());
    expect(existsSync('/tmp/starsieve-escape-test.json')).toBe(false);
    expect(existsSync(join(d, '..', 'escape.json'))).toBe(false);
  });
});

describe('binding files are data', () => {
  const parse = (text: string) => {
    try {
      parseBindingFile(text, 'b.yaml');
      return null;
    } catch (err) {
      if (err instanceof BindingError) return err.message;
      throw err;
    }
  };

  it('refuse tags that would mean code in other YAML loaders, naming the line', () => {
    expect(parse('columns:\n  mass_Msun: !!js/function "function () { return 1 }"\n')).toMatch(
      /^b\.yaml, line 2, column 14: the tag !!js\/function is not accepted: a binding file holds plain data .*nothing in it is ever run$/,
    );
    expect(parse('columns: !!python/object:os.system {}\n')).toMatch(/line 1, column 10: the tag !!python\/object:os\.system is not accepted/);
    expect(parse('columns:\n  mass_Msun: !custom mass\n')).toMatch(/line 2, column 14: the tag !custom is not accepted/);
    // The tags of the YAML core schema are data and stay allowed.
    expect(parse('columns:\n  mass_Msun: !!str mass\n')).toBeNull();
  });

  it('refuse an alias bomb quickly, with its position, instead of expanding it', () => {
    const levels = ['a: &a ["x","x","x","x","x","x","x","x","x"]'];
    for (let k = 1; k < 9; k++) levels.push(`${'abcdefghi'[k]}: &${'abcdefghi'[k]} [${Array(9).fill(`*${'abcdefghi'[k - 1]}`).join(',')}]`);
    const started = Date.now();
    const msg = parse(levels.join('\n') + '\ncolumns:\n  mass_Msun: mass\n');
    expect(Date.now() - started).toBeLessThan(5000);
    expect(msg).toMatch(/^b\.yaml, line \d+, column \d+: the binding file is not accepted: its aliases \(\*name\) expand too far/);
  });

  it('cannot touch Object.prototype through __proto__ keys', () => {
    const text = 'columns:\n  __proto__: { quantity: mass }\n  constructor: none\n';
    parse(text);
    parse('{"columns": {"__proto__": {"polluted": "yes"}, "mass_Msun": "mass"}}');
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    expect(({} as Record<string, unknown>).quantity).toBeUndefined();
  });

  it('through the CLI: one line, exit 2, no stack', () => {
    const d = tempDir();
    const b = join(d, 'evil.yaml');
    writeFileSync(b, 'columns:\n  mass_Msun: !!js/function "function () { require(\'fs\').writeFileSync(\'/tmp/starsieve-pwned\', \'x\') }"\n');
    const r = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--binding', b, '--quiet']);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).not.toMatch(STACK_FRAME);
    expect(existsSync('/tmp/starsieve-pwned')).toBe(false);
  });
});

describe('no code is loaded from data', () => {
  it('every import() and require() in cli/ and rules/ names a fixed module, and nothing evaluates strings', () => {
    const files = [...tree(join(REPO, 'cli')).map((f) => join('cli', f)), ...tree(join(REPO, 'rules')).map((f) => join('rules', f))].filter((f) => f.endsWith('.ts'));
    const offenders: string[] = [];
    for (const f of files) {
      const src = readFileSync(join(REPO, f), 'utf8').replace(/\/\*[\s\S]*?\*\/|\/\/.*$/gm, '');
      for (const m of src.matchAll(/\b(import|require)\s*\(\s*([^)]*)\)/g)) {
        if (!/^(['"])[^'"]+\1$/.test(m[2].trim()) && !/^new URL\(/.test(m[2].trim())) offenders.push(`${f}: ${m[0]}`);
      }
      for (const m of src.matchAll(/\beval\s*\(|\bnew\s+Function\s*\(|\bvm\.run/g)) offenders.push(`${f}: ${m[0]}`);
    }
    expect(offenders).toEqual([]);
  });
});
