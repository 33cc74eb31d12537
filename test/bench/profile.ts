/**
 * `--profile`: one `starsieve check` of the CSV under `node --cpu-prof`, and the functions with
 * the most self time, summed over every profile the run wrote (the main thread and any workers).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';

interface CallFrame {
  functionName: string;
  url: string;
  lineNumber: number;
}
interface CallFrameWithColumn extends CallFrame {
  columnNumber: number;
}
interface ProfileNode {
  id: number;
  callFrame: CallFrameWithColumn;
}
/** The parts of a V8 .cpuprofile used here. */
interface CpuProfile {
  nodes: ProfileNode[];
  startTime: number;
  endTime: number;
  samples?: number[];
  timeDeltas?: number[];
}

export interface HotFunction {
  name: string;
  where: string;
  selfMs: number;
  /** Share of all sampled time. */
  percent: number;
}

export interface ProfileResult {
  dir: string;
  files: string[];
  seconds: number;
  totalMs: number;
  top: HotFunction[];
}

const escape = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');

/**
 * Lines where a function of this name is defined in a source file, in file order. tsx compiles
 * each TypeScript file with its whitespace minified (names kept), so a profile's line numbers
 * are those of the compiled code (mostly 1); the name, and the order of the columns within a
 * file, find the real line instead.
 */
function definitionLines(source: string, name: string): number[] {
  const n = escape(name);
  const re = new RegExp(
    `(?:\\bfunction\\*?\\s+${n}\\s*[<(]|^\\s*(?:(?:async|static|private|public|protected|override|get|set)\\s+|\\*\\s*)*${n}\\s*[<(]|\\b${n}\\s*[:=]\\s*(?:async\\s*)?(?:\\(|function\\b|[A-Za-z_$][\\w$]*\\s*=>)|\\bclass\\s+${n}\\b)`,
  );
  const out: number[] = [];
  source.split('\n').forEach((line, i) => {
    const t = line.trimStart();
    if (t.startsWith('//') || t.startsWith('*') || t.startsWith('/*')) return;
    if (re.test(line)) out.push(i + 1);
  });
  return out;
}

interface Site {
  name: string;
  file: string;
  line: number;
  column: number;
}

/** `file:line` for every (name, file, column) seen: the k-th column of a name in a file is its k-th definition. */
function placeSites(sites: Site[], repo: string): Map<string, string> {
  const groups = new Map<string, Site[]>();
  for (const s of sites) {
    const k = `${s.name}\u0000${s.file}`;
    const g = groups.get(k) ?? [];
    if (!g.some((x) => x.column === s.column && x.line === s.line)) g.push(s);
    groups.set(k, g);
  }
  const out = new Map<string, string>();
  const cache = new Map<string, string | null>();
  for (const g of groups.values()) {
    g.sort((a, b) => a.line - b.line || a.column - b.column);
    const { file, name } = g[0];
    if (!cache.has(file)) cache.set(file, /\.[cm]?[jt]s$/.test(file) && existsSync(join(repo, file)) ? readFileSync(join(repo, file), 'utf8') : null);
    const src = cache.get(file) ?? null;
    // Only TypeScript goes through tsx; plain .js and .mjs files keep their lines.
    const defs = src && /\.[cm]?ts$/.test(file) && name !== '(anonymous)' ? definitionLines(src, name) : [];
    g.forEach((s, i) => {
      const line = defs.length ? defs[Math.min(i, defs.length - 1)] : s.line;
      out.set(siteKey(s), `${file}:${line}`);
    });
  }
  return out;
}

const siteKey = (s: Site) => `${s.name}\u0000${s.file}\u0000${s.line}\u0000${s.column}`;

/**
 * Self time per function: each sample's time (the delta to the next sample; the last sample takes
 * the profile's end) goes to the function on top of the stack. Idle time (a thread waiting for
 * work or for its workers) is left out, so the shares are of busy time.
 */
export function selfTimes(profiles: readonly CpuProfile[], repo: string): { totalMs: number; byFunction: Map<string, HotFunction> } {
  const micros = new Map<string, { site: Site; us: number }>();
  let totalUs = 0;
  for (const p of profiles) {
    const frame = new Map<number, CallFrameWithColumn>(p.nodes.map((n) => [n.id, n.callFrame]));
    const samples = p.samples ?? [];
    const deltas = p.timeDeltas ?? [];
    let t = p.startTime;
    const times: number[] = [];
    for (const d of deltas) times.push((t += d));
    for (let i = 0; i < samples.length; i++) {
      const next = i + 1 < times.length ? times[i + 1] : p.endTime;
      const us = Math.max(0, next - times[i]);
      const cf = frame.get(samples[i]);
      if (!cf || cf.functionName === '(idle)') continue;
      totalUs += us;
      const url = cf.url.startsWith('file://') ? relative(repo, fileURLToPath(cf.url)) : cf.url;
      const site: Site = { name: cf.functionName || '(anonymous)', file: url, line: cf.lineNumber + 1, column: cf.columnNumber + 1 };
      const k = siteKey(site);
      const e = micros.get(k) ?? { site, us: 0 };
      e.us += us;
      micros.set(k, e);
    }
  }
  const where = placeSites([...micros.values()].map((e) => e.site), repo);
  const byFunction = new Map<string, HotFunction>();
  const totalMs = totalUs / 1000;
  for (const [k, e] of micros) {
    const w = e.site.file ? (where.get(k) ?? '') : '';
    const key = `${e.site.name}\u0000${w}`;
    const f = byFunction.get(key) ?? { name: e.site.name, where: w, selfMs: 0, percent: 0 };
    f.selfMs += e.us / 1000;
    byFunction.set(key, f);
  }
  for (const f of byFunction.values()) f.percent = totalMs > 0 ? (100 * f.selfMs) / totalMs : 0;
  return { totalMs, byFunction };
}

export function profileCheck(repo: string, file: string, report: string, top = 15): ProfileResult {
  const dir = join(repo, 'test-output/profiles');
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const t0 = performance.now();
  const r = spawnSync(
    process.execPath,
    ['--cpu-prof', '--cpu-prof-dir', dir, join(repo, 'bin/starsieve.js'), 'check', file, '--quiet', '--fail-on', 'never', '--report', report],
    { cwd: repo, encoding: 'utf8', maxBuffer: 1 << 26 },
  );
  const seconds = (performance.now() - t0) / 1000;
  if (r.status !== 0) throw new Error(`profiled check failed (exit ${r.status}): ${r.stderr}`);
  const files = readdirSync(dir).filter((f) => f.endsWith('.cpuprofile'));
  const profiles = files.map((f) => JSON.parse(readFileSync(join(dir, f), 'utf8')) as CpuProfile);
  const { totalMs, byFunction } = selfTimes(profiles, repo);
  const sorted = [...byFunction.values()].sort((a, b) => b.selfMs - a.selfMs).slice(0, top);
  return { dir: relative(repo, dir), files, seconds, totalMs, top: sorted };
}
