/**
 * One measurement: a command run as a child process under GNU time, so its peak RSS is its own,
 * several times, with the median wall time.
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';

export const GNU_TIME = '/usr/bin/time';

export interface Spec {
  /** Short name, as `--only` takes it. */
  key: string;
  label: string;
  /** starsieve itself, or a peer it is compared with. */
  kind: 'starsieve' | 'peer';
  format: 'csv' | 'arrow' | 'parquet';
  file: string;
  bytes: number;
  rows: number;
  /** Arguments to `node`. */
  args: string[];
  /** Exit codes that mean success. */
  okCodes?: readonly number[];
}

export interface Run {
  seconds: number;
  peakRssMb: number;
}

export interface Measurement {
  key: string;
  label: string;
  kind: Spec['kind'];
  format: Spec['format'];
  bytes: number;
  rows: number;
  runs: Run[];
  /** Median over the runs. */
  seconds: number;
  rowsPerSecond: number;
  mbPerSecond: number;
  /** The largest over the runs. */
  peakRssMb: number;
  /** stdout of the last run (the peers print what they counted). */
  stdout: string;
}

/** A measurement whose command failed; the others still run. */
export interface Failure {
  key: string;
  label: string;
  message: string;
}

export function requireGnuTime(): void {
  if (!existsSync(GNU_TIME)) throw new Error(`the benchmark needs ${GNU_TIME} (Debian package "time") to read peak RSS`);
}

/** Runs the spec once; wall time from our own clock (it includes Node's start-up, as a user waits for it). */
export function runOnce(spec: Spec, cwd: string): Run & { stdout: string } {
  const t0 = process.hrtime.bigint();
  const r = spawnSync(GNU_TIME, ['-f', '%M', process.execPath, ...spec.args], { cwd, encoding: 'utf8', maxBuffer: 1 << 28 });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const ok = spec.okCodes ?? [0];
  const lines = (r.stderr ?? '').trim().split('\n');
  const rssKb = Number(lines[lines.length - 1]);
  if (r.error || r.status === null || !ok.includes(r.status) || !Number.isFinite(rssKb)) {
    const why = r.error ? r.error.message : `exit ${r.status ?? r.signal}`;
    throw new Error(`${spec.label} failed (${why}):\n${lines.slice(-20).join('\n')}`);
  }
  return { seconds, peakRssMb: rssKb / 1024, stdout: r.stdout };
}

export function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const n = s.length;
  return n % 2 === 1 ? s[(n - 1) >> 1] : (s[n / 2 - 1] + s[n / 2]) / 2;
}

export function summarise(spec: Spec, runs: Run[], stdout: string): Measurement {
  const seconds = median(runs.map((r) => r.seconds));
  return {
    key: spec.key,
    label: spec.label,
    kind: spec.kind,
    format: spec.format,
    bytes: spec.bytes,
    rows: spec.rows,
    runs,
    seconds,
    rowsPerSecond: spec.rows / seconds,
    mbPerSecond: spec.bytes / 1e6 / seconds,
    peakRssMb: Math.max(...runs.map((r) => r.peakRssMb)),
    stdout,
  };
}

/**
 * Runs every spec `repeat` times, round by round (each round runs every spec once), so load from
 * other processes on the machine falls on all measurements alike rather than on one. After the
 * first round, rounds are dropped when the rest would overrun `budgetSeconds`.
 */
export function measureAll(
  specs: readonly Spec[],
  repeat: number,
  cwd: string,
  budgetSeconds: number,
  log: (s: string) => void,
): { measurements: Measurement[]; failures: Failure[]; rounds: number } {
  const runs = new Map<string, Run[]>(specs.map((s) => [s.key, []]));
  const stdout = new Map<string, string>();
  const failed = new Map<string, Failure>();
  const started = performance.now();
  let rounds = 0;
  for (let round = 0; round < repeat; round++) {
    if (round > 0) {
      const elapsed = (performance.now() - started) / 1000;
      const perRound = elapsed / round;
      if (elapsed + perRound > budgetSeconds) {
        log(`  stopping after ${round} of ${repeat} rounds: another round (${perRound.toFixed(0)} s) would pass the ${budgetSeconds} s budget (--budget)`);
        break;
      }
    }
    log(`round ${round + 1} of ${repeat}`);
    for (const spec of specs) {
      if (failed.has(spec.key)) continue;
      let r: ReturnType<typeof runOnce>;
      try {
        r = runOnce(spec, cwd);
      } catch (e) {
        const message = e instanceof Error ? e.message : String(e);
        failed.set(spec.key, { key: spec.key, label: spec.label, message });
        log(`  ${spec.label.padEnd(40)} FAILED, left out: ${message.split('\n').slice(0, 3).join(' | ')}`);
        continue;
      }
      runs.get(spec.key)!.push({ seconds: r.seconds, peakRssMb: r.peakRssMb });
      stdout.set(spec.key, r.stdout);
      log(`  ${spec.label.padEnd(40)} ${r.seconds.toFixed(2).padStart(7)} s ${r.peakRssMb.toFixed(0).padStart(5)} MB`);
    }
    rounds++;
  }
  const measured = specs.filter((s) => !failed.has(s.key) && runs.get(s.key)!.length > 0);
  return { measurements: measured.map((s) => summarise(s, runs.get(s.key)!, stdout.get(s.key) ?? '')), failures: [...failed.values()], rounds };
}
