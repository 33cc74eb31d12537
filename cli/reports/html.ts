import type { RuleReport } from '../../rules/engine/runner.js';
import type { Finding, Severity } from '../../rules/engine/types.js';
import { eddingtonPerSolarMass } from '../../rules/physics/eddington.js';
import { relationAt, type RelationChoice, type RelationVerdictInput } from '../../rules/physics/relation-choice.js';
import { logLuminosityFromRadiusTeff } from '../../rules/physics/stellar.js';
import type { Binding } from '../binding/types.js';
import { AtomicFile } from './atomic-file.js';
import { MAX_FLAGGED, type PlotData } from './plot-data.js';
import { esc, markStyles, marker, svgPlot, type Band, type Curve } from './svg-plot.js';
import type { InputSummary } from './terminal.js';

export interface HtmlReportData {
  tool: { name: string; version: string };
  createdAt: string;
  inputs: InputSummary[];
  bindings: Binding[];
  rules: { id: string; title: string; severity: Severity; reports: RuleReport[] }[];
  counts: Map<string, Record<Severity, number>>;
  shown: Map<string, Finding[]>;
  plot: PlotData;
  failOn: string;
  failed: boolean;
}

const num = (n: number) => n.toLocaleString('en-US');

/** A segment of the catalog's own fit as the report records it (mass-luminosity-outlier's details). */
export interface FitSegment {
  range: [number, number];
  mode: string;
  slope: number;
  intercept: number;
  intrinsicScatterDex: number;
}

/**
 * The relation the rule judged by: a published one, or with `--relation catalog` the catalog's own
 * fit per segment (the default relation where a segment had too few stars to fit).
 */
function judgedRelation(choice: RelationChoice, fit: FitSegment[] | null): (m: number, rel: RelationVerdictInput) => boolean {
  if (choice !== 'catalog' || !fit) return (m, rel) => relationAt(choice === 'catalog' ? 'default' : choice, m, rel);
  return (m, rel) => {
    const s = fit.find((seg) => m >= seg.range[0] && m <= seg.range[1]);
    if (!s || s.mode === 'published') return relationAt('default', m, rel);
    rel.logL = s.slope * Math.log10(m) + s.intercept;
    rel.slope = s.slope;
    rel.scatter = s.intrinsicScatterDex;
    rel.brightAllowance = 0;
    return true;
  };
}

/** The relation band and Eddington lines on the mass-luminosity plane, from the same physics the rules use. */
export function massLuminosityOverlays(choice: RelationChoice, threshold: number, fit: FitSegment[] | null): { curves: Curve[]; bands: Band[] } {
  const rel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
  const at = judgedRelation(choice, fit);
  const mid: [number, number][] = [];
  const lower: [number, number][] = [];
  const upper: [number, number][] = [];
  for (let x = -1; x <= 2.0001; x += 0.01) {
    if (!at(10 ** x, rel)) continue;
    mid.push([x, rel.logL]);
    lower.push([x, rel.logL - threshold * rel.scatter]);
    upper.push([x, rel.logL + rel.brightAllowance + threshold * rel.scatter]);
  }
  const edd = (X: number): [number, number][] => [
    [-1.5, Math.log10(eddingtonPerSolarMass(X)) - 1.5],
    [2.7, Math.log10(eddingtonPerSolarMass(X)) + 2.7],
  ];
  return {
    bands: [{ label: `main-sequence band: relation ${choice}, ${threshold} sigma of its intrinsic scatter`, lower, upper, fill: '#9ecae1' }],
    curves: [
      { label: `mass-luminosity relation (${choice})`, points: mid, stroke: '#08519c', width: 1.8 },
      { label: 'Eddington luminosity, X = 0.7', points: edd(0.7), stroke: '#7f2704', dash: '6 4' },
      { label: 'Eddington luminosity, X = 0 (no composition is above it)', points: edd(0), stroke: '#7f2704', width: 2 },
    ],
  };
}

/** Lines of constant radius on the Hertzsprung-Russell plane (Stefan-Boltzmann). */
function radiusLines(): Curve[] {
  return [0.01, 0.1, 1, 10, 100, 1000].map((r) => ({
    label: `R = ${r} R_sun`,
    points: [3.3, 5.0].map((t) => [t, logLuminosityFromRadiusTeff(r, 10 ** t)] as [number, number]),
    stroke: '#b0b0b0',
    dash: '2 3',
    width: 1,
  }));
}

function table(head: string[], rows: string[][]): string {
  return `<table><thead><tr>${head.map((h) => `<th>${h}</th>`).join('')}</tr></thead><tbody>${rows.map((r) => `<tr>${r.map((c) => `<td>${c}</td>`).join('')}</tr>`).join('')}</tbody></table>`;
}

const CSS = `
body{font:14px/1.45 system-ui,-apple-system,"Segoe UI",sans-serif;color:#1d1d1b;margin:24px auto;max-width:1180px;padding:0 16px}
h1{font-size:22px;margin:0 0 4px}h2{font-size:17px;margin:28px 0 8px;border-bottom:1px solid #ddd;padding-bottom:4px}
.meta{color:#666}.verdict{display:inline-block;padding:2px 10px;border-radius:3px;font-weight:bold;color:#fff}
.fail{background:#b2182b}.pass{background:#2b7a3d}
table{border-collapse:collapse;margin:6px 0 12px;font-size:13px}th,td{border:1px solid #ddd;padding:3px 8px;text-align:left;vertical-align:top}
th{background:#f4f4f0}td.n{text-align:right;font-variant-numeric:tabular-nums}
.error{color:#b2182b;font-weight:bold}.warning{color:#8c510a;font-weight:bold}.note{color:#2166ac}
.plots{display:flex;flex-wrap:wrap;gap:16px}.legend{display:flex;flex-wrap:wrap;gap:14px;margin:6px 0;font-size:13px}
.legend span{display:inline-flex;align-items:center;gap:4px}code{background:#f4f4f0;padding:0 3px}
`;

/** The self-contained HTML report: one file, inline CSS and SVG, no script and no network. */
export function renderHtml(d: HtmlReportData): string {
  const p = d.plot;
  const plotted = new Set([...p.mlFlagged, ...p.hrFlagged].map((f) => f.rule));
  const ruleIds = d.rules.map((r) => r.id).filter((id) => plotted.has(id));
  const styles = markStyles(ruleIds);
  const ml = d.rules.find((r) => r.id === 'mass-luminosity-outlier')?.reports[0];
  const choice = ((ml?.params.relation as string) ?? 'default') as RelationChoice;
  // The threshold the rule used (raised by `--sigma auto`), and the catalog's fit where there is one.
  const details = (ml?.details ?? {}) as { threshold?: number; catalogFit?: { segments?: FitSegment[] } | null };
  const threshold = typeof details.threshold === 'number' ? details.threshold : ((ml?.params.threshold as number) ?? 3);
  const overlays = massLuminosityOverlays(choice, threshold, details.catalogFit?.segments ?? null);
  const totals = { error: 0, warning: 0, note: 0 };
  for (const c of d.counts.values()) for (const s of ['error', 'warning', 'note'] as const) totals[s] += c[s];
  const parts: string[] = [];
  parts.push(`<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width">`);
  parts.push(`<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`);
  parts.push(`<title>starsieve report: ${esc(d.inputs.map((i) => i.path).join(', '))}</title><style>${CSS}</style></head><body>`);
  parts.push(`<h1>starsieve report</h1><div class="meta">${esc(d.tool.name)} ${esc(d.tool.version)} · ${esc(d.createdAt)}</div>`);
  parts.push(
    `<p><span class="verdict ${d.failed ? 'fail' : 'pass'}">${d.failed ? 'FAIL' : 'PASS'}</span> <span class="error">${num(totals.error)} error</span>, <span class="warning">${num(totals.warning)} warning</span>, <span class="note">${num(totals.note)} note</span> (fail level: ${esc(d.failOn)})</p>`,
  );
  parts.push('<h2>Diagrams</h2>');
  const legend = ruleIds
    .map((id) => `<span><svg width="14" height="14" viewBox="-7 -7 14 14">${marker(styles.get(id)!, 0, 0, 5)}</svg>${esc(id)}</span>`)
    .join('');
  parts.push(
    `<div class="legend">${legend}<span><svg width="26" height="10"><line x1="0" y1="5" x2="26" y2="5" stroke="#08519c" stroke-width="2"/></svg>mass-luminosity relation (${esc(choice)}) and its ${threshold}-sigma band</span><span><svg width="26" height="10"><line x1="0" y1="5" x2="26" y2="5" stroke="#7f2704" stroke-width="2"/></svg>Eddington limit, X = 0</span><span><svg width="26" height="10"><line x1="0" y1="5" x2="26" y2="5" stroke="#7f2704" stroke-dasharray="6 4"/></svg>X = 0.7</span></div>`,
  );
  const dens = p.ml.total > p.mlPoints.length / 2 || p.hr.total > p.hrPoints.length / 2;
  parts.push(
    `<p class="meta">Grey: ${dens ? 'density of all stars (binned; darker = more stars, log scale)' : 'every star'}; marks: flagged stars by rule (hover for the star). Stars whose luminosity was set aside as a unit slip are drawn at the suggested value.${p.flaggedNotShown ? ` ${num(p.flaggedNotShown)} flagged stars are not drawn (no mass or Teff, or beyond the ${num(MAX_FLAGGED)} drawn per diagram).` : ''}</p>`,
  );
  parts.push('<div class="plots">');
  parts.push(
    svgPlot({ title: 'Mass-luminosity diagram', xLabel: 'log M / M_sun', yLabel: 'log L / L_sun', x: [-1.5, 2.7], y: [-5.5, 7.5], grid: p.ml, points: p.mlPoints, flagged: p.mlFlagged, styles, curves: overlays.curves, bands: overlays.bands }),
  );
  parts.push(
    svgPlot({ title: 'Hertzsprung-Russell diagram', xLabel: 'log Teff / K', yLabel: 'log L / L_sun', x: [3.3, 5.0], y: [-5.5, 7.5], reverseX: true, grid: p.hr, points: p.hrPoints, flagged: p.hrFlagged, styles, curves: radiusLines(), bands: [] }),
  );
  parts.push('</div>');
  parts.push('<h2>Inputs</h2>');
  parts.push(
    table(
      ['input', 'format', 'records', 'rows checked', 'not parseable', 'rows with findings'],
      d.inputs.map((i) => [esc(i.path), esc(i.format), `<span class="n">${num(i.records)}</span>`, num(i.rows), num(i.unparseableRecords), num(i.rowsWithFindings)]),
    ),
  );
  parts.push('<h2>Findings by rule</h2>');
  parts.push(
    table(
      ['rule', 'checked', 'skipped', 'error', 'warning', 'note', 'notes'],
      d.rules.map((r) => {
        const c = d.counts.get(r.id) ?? { error: 0, warning: 0, note: 0 };
        const checked = r.reports.reduce((a, x) => a + x.checked, 0);
        const skipped = r.reports.reduce((a, x) => a + Object.values(x.skipped).reduce((s, v) => s + v, 0), 0);
        const det = r.reports[0]?.details as { expectedByChance?: number; observed?: number } | undefined;
        const note = r.reports.every((x) => x.status === 'skipped')
          ? `not run: ${esc(r.reports[0]?.reason ?? '')}`
          : typeof det?.expectedByChance === 'number'
            ? `chance alone predicts ${det.expectedByChance.toFixed(1)} exceedances; ${det.observed} seen`
            : '';
        return [`<code>${esc(r.id)}</code>`, num(checked), num(skipped), num(c.error), num(c.warning), num(c.note), note];
      }),
    ),
  );
  parts.push('<h2>Column bindings</h2>');
  d.bindings.forEach((b, k) => {
    parts.push(`<p><b>${esc(d.inputs[k]?.path ?? '')}</b></p>`);
    parts.push(table(['quantity', 'column', 'unit', 'decided by', 'why'], b.columns.map((c) => [esc(c.quantity), `<code>${esc(c.column)}</code>`, esc(c.unit || '-'), esc(`${c.quantitySource} / ${c.unitSource}`), esc(c.reason)])));
    if (b.notes.length) parts.push(`<ul>${b.notes.map((n) => `<li>${esc(n)}</li>`).join('')}</ul>`);
  });
  parts.push('<h2>Findings</h2>');
  for (const r of d.rules) {
    const list = d.shown.get(r.id);
    if (!list?.length) continue;
    const c = d.counts.get(r.id)!;
    const total = c.error + c.warning + c.note;
    parts.push(`<h3><code>${esc(r.id)}</code> ${esc(r.title)} <span class="meta">(${num(total)}${total > list.length ? `, first ${list.length} shown; all are in the JSON report` : ''})</span></h3>`);
    parts.push(
      table(
        ['severity', 'row', 'line', 'star', 'message', 'suggestion'],
        list.map((f) => [
          `<span class="${f.severity}">${f.severity}</span>`,
          f.scope === 'column' ? 'column' : f.row === null ? 'no row' : num(f.row),
          f.line === null ? '' : num(f.line),
          esc(f.id ?? ''),
          esc(f.message) + (f.cause ? ` <span class="meta">(likely caused by ${esc(f.cause)})</span>` : ''),
          esc(f.suggestion?.text ?? ''),
        ]),
      ),
    );
  }
  parts.push(`<p class="meta">A finding is a flag for review, not proof. No relation is applied outside its validity range.</p></body></html>\n`);
  return parts.join('\n');
}

/** Writes the page atomically, like the other reports. */
export function writeHtml(path: string, data: HtmlReportData): void {
  const f = new AtomicFile(path);
  f.write(renderHtml(data));
  f.commit();
}
