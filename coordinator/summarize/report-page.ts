import { completedPercent } from '../completed-percent.js';
import type { CollectedReport } from './collect.js';
import { escapeXml } from './svg-util.js';

/** The page around the charts: what was swept, how far it got, what went wrong reading it. */
export interface PageInput {
  readonly report: CollectedReport;
  readonly generatedAt: string;
  /** The charts' sections (HTML), in page order. */
  readonly sections: readonly string[];
}

const STYLE = `
body { font-family: sans-serif; margin: 24px auto; max-width: 1200px; padding: 0 16px; color: #1a1a1a; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.2em; margin-top: 1.6em; border-bottom: 1px solid #ddd; padding-bottom: 4px; }
table { border-collapse: collapse; font-size: 0.85em; }
th, td { border: 1px solid #d5d5d5; padding: 3px 8px; text-align: right; }
th { background: #f2f2f2; position: sticky; top: 0; }
table.meta th, table.meta td { text-align: left; }
table.meta th { position: static; width: 13em; }
.progress { display: inline-block; width: 200px; height: 10px; background: #e6e6e6; vertical-align: middle; margin-left: 8px; }
.progress > span { display: block; height: 100%; background: #3b528b; }
figure { margin: 16px 0 28px; }
figcaption { font-size: 0.9em; color: #444; margin-top: 4px; }
.table-wrap { max-height: 560px; overflow: auto; border: 1px solid #ddd; display: inline-block; max-width: 100%; }
.warnings { background: #fff6e0; border: 1px solid #e0b44c; padding: 8px 12px; }
.warnings li { font-family: monospace; font-size: 0.85em; }
svg .cell { cursor: crosshair; }
svg .cell:hover { stroke: #ff2d55; stroke-width: 2; }
#cell-tip { position: fixed; pointer-events: none; background: rgba(20,20,20,0.92); color: #fff; font-size: 12px; padding: 6px 8px; border-radius: 4px; white-space: pre; display: none; z-index: 10; }
.note { color: #555; font-size: 0.9em; }
`;

// Small, dependency-free tooltip: reads the numbers a cell carries as data attributes.
const SCRIPT = `
(function () {
  var tip = document.getElementById('cell-tip');
  function text(cell) {
    var d = cell.dataset;
    var lines = [d.where || ''];
    if (d.value === '') {
      lines.push('no data yet');
    } else if (d.lo !== '') {
      lines.push('rate ' + Number(d.value).toFixed(3) + '  (n = ' + d.n + ', successes = ' + d.successes + ')');
      lines.push('95% interval ' + Number(d.lo).toFixed(3) + ' to ' + Number(d.hi).toFixed(3));
    } else {
      lines.push('mean ' + Number(d.value).toPrecision(4) + '  (n = ' + d.n + ', successes = ' + d.successes + ')');
    }
    lines.push(d.n + ' of ' + d.planned + ' planned trials' + (Number(d.n) < Number(d.planned) ? ' (incomplete)' : ''));
    return lines.join('\\n');
  }
  var cells = document.querySelectorAll('svg .cell');
  for (var i = 0; i < cells.length; i++) {
    var cell = cells[i];
    // The page has its own tooltip; the SVG <title> stays for standalone files.
    var title = cell.querySelector('title');
    if (title) cell.removeChild(title);
    cell.addEventListener('mouseenter', function (e) { tip.textContent = text(e.currentTarget); tip.style.display = 'block'; });
    cell.addEventListener('mousemove', function (e) { tip.style.left = (e.clientX + 14) + 'px'; tip.style.top = (e.clientY + 14) + 'px'; });
    cell.addEventListener('mouseleave', function () { tip.style.display = 'none'; });
  }
})();
`;

/**
 * The self-contained report page: metadata, every diagram inline, the table
 * and a hover tooltip per cell. No external resource of any kind (the
 * content security policy forbids fetching one), so it opens from disk.
 */
export function renderReportPage(input: PageInput): string {
  const e = escapeXml;
  const { report } = input;
  const { sweep, settings } = report;
  const { spec } = sweep;
  const pct = completedPercent(report.completedJobs, report.plannedJobs);
  const fraction = report.plannedJobs === 0 ? 0 : report.completedJobs / report.plannedJobs;
  const sampler =
    spec.sampler.kind === 'grid'
      ? 'grid'
      : `${spec.sampler.kind}, ${spec.sampler.points} points, ${settings.bins} bins per axis`;
  const meta: Array<[string, string]> = [
    ['sweep file', e(sweep.source ?? '(none recorded)')],
    ['sweep hash', `<code>${e(sweep.hash)}</code>`],
    ['model', e(`${sweep.model.id} ${sweep.model.version}`)],
    ['code version', e(sweep.codeVersion)],
    ['created at', e(sweep.createdAt)],
    ['report built at', e(input.generatedAt)],
    ['sampler', e(sampler)],
    ['replicates per point', String(spec.replicates)],
    ['jobs planned', String(report.plannedJobs)],
    [
      'jobs completed',
      `<span id="completed">${report.completedJobs} of ${report.plannedJobs} (${pct} complete)</span><span class="progress"><span style="width:${(100 * Math.min(1, fraction)).toFixed(1)}%"></span></span>`,
    ],
    ['jobs failed (no result)', String(report.failedJobs)],
    [
      'failed attempts by kind',
      report.failuresByKind.length === 0 ? 'none' : report.failuresByKind.map(([k, n]) => `${e(k)}: ${n}`).join(', '),
    ],
    [
      'shown',
      e(
        [
          `metric ${report.metric.name}`,
          settings.x === null ? null : `x ${settings.x}`,
          settings.y === null ? null : `y ${settings.y}`,
          settings.facet === null ? null : `one panel per ${settings.facet}`,
          report.pooled.length === 0 ? null : `pooled over ${report.pooled.join(', ')}`,
        ]
          .filter((s) => s !== null)
          .join('; '),
      ),
    ],
  ];
  const unit = report.layout.binned ? 'bin' : 'point';
  const parts: string[] = [];
  parts.push('<!DOCTYPE html>');
  parts.push('<html lang="en"><head><meta charset="utf-8">');
  parts.push(
    `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:">`,
  );
  parts.push('<meta name="viewport" content="width=device-width, initial-scale=1">');
  parts.push(`<title>${e(spec.name)}: recallscape report</title>`);
  parts.push(`<style>${STYLE}</style></head><body>`);
  parts.push(`<h1>${e(spec.name)}</h1>`);
  parts.push(
    `<p class="note">Phase diagrams and per-${unit} table of a recallscape sweep. Rates carry 95% Wilson score intervals; hover over a cell for its numbers.</p>`,
  );
  parts.push('<h2>Sweep</h2><table class="meta">');
  for (const [k, v] of meta) parts.push(`<tr><th>${e(k)}</th><td>${v}</td></tr>`);
  parts.push('</table>');

  if (report.warningCount > 0) {
    parts.push(
      `<h2>Warnings while reading results</h2><div class="warnings" id="warnings"><p>${report.warningCount} problem(s) in the result files; the affected lines were skipped.</p><ul>`,
    );
    for (const w of report.warnings) parts.push(`<li>${e(w.kind)}: ${e(w.file)} line ${w.line}: ${e(w.message)}</li>`);
    if (report.warningCount > report.warnings.length)
      parts.push(`<li>... and ${report.warningCount - report.warnings.length} more</li>`);
    parts.push('</ul></div>');
  }

  parts.push(...input.sections);
  parts.push('<div id="cell-tip" role="tooltip"></div>');
  parts.push(`<script>${SCRIPT}</script>`);
  parts.push('</body></html>');
  return `${parts.join('\n')}\n`;
}
