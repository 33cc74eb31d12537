import type { DensityGrid, FlaggedPoint } from './plot-data.js';

/** Text for HTML and SVG: every catalog string goes through this before it reaches the page. */
export function esc(s: unknown): string {
  return String(s).replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/**
 * Marks for rules, chosen so every pair differs in both shape and colour and reads in grey scale
 * too. The colours are from the Okabe & Ito (2008) colour-blind-safe set, in an order of our own.
 */
const COLOURS = ['#D55E00', '#0072B2', '#009E73', '#CC79A7', '#E69F00', '#56B4E9', '#000000', '#F0E442'];
const SHAPES = ['triangle', 'square', 'diamond', 'circle', 'down', 'cross', 'plus', 'star'] as const;

export interface MarkStyle {
  colour: string;
  shape: (typeof SHAPES)[number];
}

/** Styles for the rules in order: colour and shape advance at different strides, so up to 64 rules get distinct pairs. */
export function markStyles(rules: readonly string[]): Map<string, MarkStyle> {
  return new Map(
    rules.map((r, i) => [r, { colour: COLOURS[i % COLOURS.length], shape: SHAPES[(i + 3 * Math.floor(i / SHAPES.length)) % SHAPES.length] }]),
  );
}

/** One marker as an SVG element, centred on (x, y). */
export function marker(style: MarkStyle, x: number, y: number, size: number, title?: string): string {
  const s = size;
  const f = `fill="${style.colour}" stroke="#fff" stroke-width="0.6"`;
  const t = title ? `<title>${esc(title)}</title>` : '';
  const poly = (pts: [number, number][]) => `<polygon points="${pts.map(([a, b]) => `${(x + a * s).toFixed(1)},${(y + b * s).toFixed(1)}`).join(' ')}" ${f}>${t}</polygon>`;
  switch (style.shape) {
    case 'circle':
      return `<circle cx="${x.toFixed(1)}" cy="${y.toFixed(1)}" r="${(s * 0.85).toFixed(1)}" ${f}>${t}</circle>`;
    case 'square':
      return poly([[-0.8, -0.8], [0.8, -0.8], [0.8, 0.8], [-0.8, 0.8]]);
    case 'diamond':
      return poly([[0, -1.1], [1.1, 0], [0, 1.1], [-1.1, 0]]);
    case 'triangle':
      return poly([[0, -1.1], [1, 0.8], [-1, 0.8]]);
    case 'down':
      return poly([[0, 1.1], [1, -0.8], [-1, -0.8]]);
    case 'cross':
      return poly([[-1, -0.6], [-0.6, -1], [0, -0.4], [0.6, -1], [1, -0.6], [0.4, 0], [1, 0.6], [0.6, 1], [0, 0.4], [-0.6, 1], [-1, 0.6], [-0.4, 0]]);
    case 'plus':
      return poly([[-0.35, -1], [0.35, -1], [0.35, -0.35], [1, -0.35], [1, 0.35], [0.35, 0.35], [0.35, 1], [-0.35, 1], [-0.35, 0.35], [-1, 0.35], [-1, -0.35], [-0.35, -0.35]]);
    case 'star': {
      const pts: [number, number][] = [];
      for (let k = 0; k < 10; k++) {
        const r = k % 2 === 0 ? 1.15 : 0.5;
        const a = (Math.PI / 5) * k - Math.PI / 2;
        pts.push([r * Math.cos(a), r * Math.sin(a)]);
      }
      return poly(pts);
    }
  }
}

export interface Curve {
  label: string;
  points: [number, number][];
  stroke: string;
  dash?: string;
  width?: number;
}

export interface Band {
  label: string;
  lower: [number, number][];
  upper: [number, number][];
  fill: string;
}

export interface PlotSpec {
  title: string;
  xLabel: string;
  yLabel: string;
  x: [number, number];
  y: [number, number];
  /** Larger values to the left (Teff on a Hertzsprung-Russell diagram). */
  reverseX?: boolean;
  grid: DensityGrid;
  /** Individual stars as [x, y, x, y, ...]; drawn instead of the density layer when they are all the stars. */
  points: number[];
  flagged: FlaggedPoint[];
  styles: Map<string, MarkStyle>;
  curves: Curve[];
  bands: Band[];
}

const W = 560;
const H = 430;
const M = { left: 58, right: 16, top: 30, bottom: 46 };

/** A scatter plot as inline SVG, drawn directly: no plotting library, no script, no network. */
export function svgPlot(p: PlotSpec): string {
  const pw = W - M.left - M.right;
  const ph = H - M.top - M.bottom;
  const sx = (v: number) => M.left + ((p.reverseX ? p.x[1] - v : v - p.x[0]) / (p.x[1] - p.x[0])) * pw;
  const sy = (v: number) => M.top + ((p.y[1] - v) / (p.y[1] - p.y[0])) * ph;
  const inside = (x: number, y: number) => x >= p.x[0] && x <= p.x[1] && y >= p.y[0] && y <= p.y[1];
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="${esc(p.title)}">`);
  out.push(`<defs><clipPath id="clip-${esc(p.title.replace(/\W/g, ''))}"><rect x="${M.left}" y="${M.top}" width="${pw}" height="${ph}"/></clipPath></defs>`);
  out.push(`<rect x="${M.left}" y="${M.top}" width="${pw}" height="${ph}" fill="#fcfcfa" stroke="#888"/>`);
  // Ticks at whole dex (or tenths when the axis is short).
  const step = (a: number, b: number) => (b - a > 3 ? 1 : 0.2);
  for (let v = Math.ceil(p.x[0] / step(...p.x)) * step(...p.x); v <= p.x[1] + 1e-9; v += step(...p.x)) {
    const X = sx(v);
    out.push(`<line x1="${X.toFixed(1)}" y1="${M.top}" x2="${X.toFixed(1)}" y2="${M.top + ph}" stroke="#e6e6e0"/>`);
    out.push(`<text x="${X.toFixed(1)}" y="${M.top + ph + 15}" font-size="11" text-anchor="middle">${Number(v.toFixed(1))}</text>`);
  }
  for (let v = Math.ceil(p.y[0]); v <= p.y[1]; v += 1) {
    const Y = sy(v);
    out.push(`<line x1="${M.left}" y1="${Y.toFixed(1)}" x2="${M.left + pw}" y2="${Y.toFixed(1)}" stroke="#e6e6e0"/>`);
    out.push(`<text x="${M.left - 6}" y="${(Y + 4).toFixed(1)}" font-size="11" text-anchor="end">${v}</text>`);
  }
  out.push(`<g clip-path="url(#clip-${esc(p.title.replace(/\W/g, ''))})">`);
  for (const b of p.bands) {
    const pts = [...b.lower, ...[...b.upper].reverse()].map(([x, y]) => `${sx(x).toFixed(1)},${sy(y).toFixed(1)}`).join(' ');
    out.push(`<polygon points="${pts}" fill="${b.fill}" stroke="none"><title>${esc(b.label)}</title></polygon>`);
  }
  const allShown = p.points.length / 2 >= p.grid.total;
  if (allShown) {
    for (let k = 0; k < p.points.length; k += 2) {
      if (inside(p.points[k], p.points[k + 1])) out.push(`<circle cx="${sx(p.points[k]).toFixed(1)}" cy="${sy(p.points[k + 1]).toFixed(1)}" r="1.5" fill="#6b6b6b" fill-opacity="0.55"/>`);
    }
  } else {
    // Density layer: one cell per occupied bin, darker with the log of the count.
    const g = p.grid;
    const lmax = Math.log1p(g.max());
    const cw = (pw / g.nx) * ((g.x1 - g.x0) / (p.x[1] - p.x[0]));
    const ch = (ph / g.ny) * ((g.y1 - g.y0) / (p.y[1] - p.y[0]));
    for (let j = 0; j < g.ny; j++) {
      for (let i = 0; i < g.nx; i++) {
        const c = g.counts[j * g.nx + i];
        if (!c) continue;
        const x = g.x0 + ((i + (p.reverseX ? 1 : 0)) / g.nx) * (g.x1 - g.x0);
        const y = g.y0 + ((j + 1) / g.ny) * (g.y1 - g.y0);
        out.push(`<rect x="${sx(x).toFixed(1)}" y="${sy(y).toFixed(1)}" width="${cw.toFixed(2)}" height="${ch.toFixed(2)}" fill="#3a3a3a" fill-opacity="${(0.12 + 0.78 * (Math.log1p(c) / lmax)).toFixed(2)}"/>`);
      }
    }
  }
  for (const c of p.curves) {
    const d = c.points.filter(([x, y]) => Number.isFinite(x) && Number.isFinite(y)).map(([x, y], k) => `${k ? 'L' : 'M'}${sx(x).toFixed(1)},${sy(y).toFixed(1)}`).join('');
    out.push(`<path d="${d}" fill="none" stroke="${c.stroke}" stroke-width="${c.width ?? 1.6}"${c.dash ? ` stroke-dasharray="${c.dash}"` : ''}><title>${esc(c.label)}</title></path>`);
  }
  for (const f of p.flagged) {
    const st = p.styles.get(f.rule);
    if (st && inside(f.x, f.y)) out.push(marker(st, sx(f.x), sy(f.y), f.severity === 'error' ? 4.6 : 3.8, f.label));
  }
  out.push('</g>');
  out.push(`<text x="${M.left + pw / 2}" y="${H - 8}" font-size="12" text-anchor="middle">${esc(p.xLabel)}</text>`);
  out.push(`<text x="14" y="${M.top + ph / 2}" font-size="12" text-anchor="middle" transform="rotate(-90 14 ${M.top + ph / 2})">${esc(p.yLabel)}</text>`);
  out.push(`<text x="${M.left}" y="18" font-size="13" font-weight="bold">${esc(p.title)}</text>`);
  out.push('</svg>');
  return out.join('');
}
