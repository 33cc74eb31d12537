import type { Batch, Finding, FindingSink } from '../../rules/engine/types.js';

/** A fixed grid over two log axes; memory does not grow with the number of stars. */
export class DensityGrid {
  readonly counts: Uint32Array;
  total = 0;
  constructor(
    readonly x0: number,
    readonly x1: number,
    readonly y0: number,
    readonly y1: number,
    readonly nx: number,
    readonly ny: number,
  ) {
    this.counts = new Uint32Array(nx * ny);
  }

  add(x: number, y: number): void {
    if (!(x >= this.x0 && x < this.x1 && y >= this.y0 && y < this.y1)) return;
    const i = Math.floor(((x - this.x0) / (this.x1 - this.x0)) * this.nx);
    const j = Math.floor(((y - this.y0) / (this.y1 - this.y0)) * this.ny);
    this.counts[j * this.nx + i]++;
    this.total++;
  }

  max(): number {
    let m = 0;
    for (const c of this.counts) if (c > m) m = c;
    return m;
  }
}

export interface FlaggedPoint {
  rule: string;
  severity: Finding['severity'];
  x: number;
  y: number;
  label: string;
}

/** Stars shown one by one: all of them for a small catalog, a capped sample beyond that. */
export const MAX_POINTS = 4000;
/** Flagged stars drawn individually on each plot; the rest are counted and the page says so. */
export const MAX_FLAGGED = 3000;

interface Pending {
  rule: string;
  severity: Finding['severity'];
  input: number;
  row: number;
  label: string;
  /** log L where the finding's suggestion puts the star, else NaN (use the catalog value). */
  suggestedLogL: number;
}

/**
 * What the HTML report plots, gathered while the catalog streams through: a density grid of
 * every star on the mass-luminosity and Hertzsprung-Russell planes, the first stars as points
 * (so a small catalog shows every star), and the flagged stars by rule. Bounded whatever the rows.
 *
 * Findings of a batch arrive while the rules run; `observe` is called after, with the batch, and
 * places them. Findings a rule makes only at the end of the input (rows held back to decide on a
 * whole column) are placed from the coordinates kept for rows a screening rule set aside.
 */
export class PlotData implements FindingSink {
  readonly ml = new DensityGrid(-1.5, 2.7, -5.5, 7.5, 140, 110);
  readonly hr = new DensityGrid(3.3, 5.0, -5.5, 7.5, 140, 110);
  readonly mlPoints: number[] = [];
  readonly hrPoints: number[] = [];
  readonly mlFlagged: FlaggedPoint[] = [];
  readonly hrFlagged: FlaggedPoint[] = [];
  flaggedNotShown = 0;
  private pending: Pending[] = [];
  /** log M, log Teff of rows whose luminosity a screening rule set aside, by input and row. */
  private readonly setAside = new Map<string, [number, number]>();

  push(f: Finding): void {
    if (f.scope !== 'row' || f.row === null) return;
    if (this.mlFlagged.length >= MAX_FLAGGED && this.hrFlagged.length >= MAX_FLAGGED) {
      this.flaggedNotShown++;
      return;
    }
    let suggestedLogL = NaN;
    const s = f.suggestion;
    if (s && s.value > 0 && (s.unit === 'solLum' || s.unit === 'log(solLum)')) suggestedLogL = s.unit === 'solLum' ? Math.log10(s.value) : s.value;
    this.pending.push({ rule: f.rule, severity: f.severity, input: f.input, row: f.row, label: `${f.id ?? `row ${f.row}`}: ${f.rule}`, suggestedLogL });
  }

  private place(p: Pending, logM: number, logT: number, logL: number): void {
    const y = Number.isFinite(p.suggestedLogL) ? p.suggestedLogL : logL;
    if (!Number.isFinite(y)) return;
    let shown = false;
    if (Number.isFinite(logM) && this.mlFlagged.length < MAX_FLAGGED) {
      this.mlFlagged.push({ rule: p.rule, severity: p.severity, x: logM, y, label: p.label });
      shown = true;
    }
    if (Number.isFinite(logT) && this.hrFlagged.length < MAX_FLAGGED) {
      this.hrFlagged.push({ rule: p.rule, severity: p.severity, x: logT, y, label: p.label });
      shown = true;
    }
    if (!shown) this.flaggedNotShown++;
  }

  /** Called with each batch after the rules have run over it. */
  observe(batch: Batch): void {
    const m = batch.quantities.mass?.value;
    const logL = batch.quantities.luminosity?.log;
    const t = batch.quantities.teff?.value;
    const lmask = batch.unusable.luminosity;
    const logM = (i: number) => (m && m[i] > 0 ? Math.log10(m[i]) : NaN);
    const logT = (i: number) => (t && t[i] > 0 ? Math.log10(t[i]) : NaN);
    for (let i = 0; i < batch.length; i++) {
      if (lmask && lmask[i]) {
        if (this.setAside.size < MAX_FLAGGED) this.setAside.set(`${batch.input}:${batch.firstRow + i}`, [logM(i), logT(i)]);
        continue;
      }
      const y = logL ? logL[i] : NaN;
      if (!Number.isFinite(y)) continue;
      const x = logM(i);
      if (Number.isFinite(x)) {
        this.ml.add(x, y);
        if (this.mlPoints.length < 2 * MAX_POINTS) this.mlPoints.push(x, y);
      }
      const xt = logT(i);
      if (Number.isFinite(xt)) {
        this.hr.add(xt, y);
        if (this.hrPoints.length < 2 * MAX_POINTS) this.hrPoints.push(xt, y);
      }
    }
    const later: Pending[] = [];
    for (const p of this.pending) {
      const i = p.row - batch.firstRow;
      if (p.input === batch.input && i >= 0 && i < batch.length) this.place(p, logM(i), logT(i), logL ? logL[i] : NaN);
      else later.push(p);
    }
    this.pending = later;
  }

  /** Places the findings made at the end of an input. */
  flush(): void {
    for (const p of this.pending) {
      const c = this.setAside.get(`${p.input}:${p.row}`);
      if (c) this.place(p, c[0], c[1], NaN);
      else this.flaggedNotShown++;
    }
    this.pending = [];
  }
}
