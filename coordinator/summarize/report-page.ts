import { completedPercent } from '../completed-percent.js';
import { shellWord } from '../shell-text.js';
import type { CollectedReport } from './collect.js';
import { escapeXml } from './svg-util.js';
import { type DescribedRow, describeSweep, type SweepDescription } from './sweep-description.js';

/** The page around the charts: what was swept, how far it got, what went wrong reading it. */
export interface PageInput {
  readonly report: CollectedReport;
  readonly generatedAt: string;
  /** The charts' sections (HTML), in page order. */
  readonly sections: readonly string[];
  /** Computed once for the page and sweep.md. */
  readonly description?: SweepDescription;
}

const STYLE = `
*, *::before, *::after { box-sizing: border-box; }
body { font-family: sans-serif; margin: 24px auto; max-width: 1200px; padding: 0 16px; color: #1a1a1a; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; overflow-wrap: anywhere; }
h2 { font-size: 1.2em; margin-top: 1.6em; border-bottom: 1px solid #ddd; padding-bottom: 4px; }
table { border-collapse: collapse; font-size: 0.85em; }
th, td { border: 1px solid #d5d5d5; padding: 3px 8px; text-align: right; }
th { background: #f2f2f2; position: sticky; top: 0; }
table.meta th, table.meta td { text-align: left; vertical-align: top; }
table.meta th { position: static; }
table.meta td.note { color: #555; min-width: 14em; }
tr.changed td, tr.changed th { background: #fff4d6; }
code { overflow-wrap: anywhere; }
.progress { display: inline-block; width: 120px; max-width: 40%; height: 10px; background: #e6e6e6; vertical-align: middle; margin-left: 8px; }
.progress > span { display: block; height: 100%; background: #3b528b; }
figure { margin: 16px 0 28px; max-width: 100%; }
figure svg { display: block; max-width: 100%; height: auto; }
figcaption { font-size: 0.9em; color: #444; margin-top: 4px; }
.table-wrap { max-height: 560px; overflow: auto; border: 1px solid #ddd; max-width: 100%; width: fit-content; }
.warnings { background: #fff6e0; border: 1px solid #e0b44c; padding: 8px 12px; overflow-wrap: anywhere; }
.warnings li { font-family: monospace; font-size: 0.85em; }
svg .cell, svg .point { cursor: pointer; }
svg .cell:hover, svg .cell.picked { stroke: #000000; stroke-width: 2.5; }
svg .point:hover, svg .point.picked { stroke-width: 2.6; }
#cell-tip { position: fixed; background: rgba(20,20,20,0.94); color: #fff; font-size: 12px; padding: 6px 8px; border-radius: 4px; white-space: pre-wrap; overflow-wrap: anywhere; display: none; z-index: 10; max-width: min(460px, calc(100vw - 16px)); user-select: text; }
.note { color: #555; font-size: 0.9em; }
.no-panel { border: 1px dashed #aaa; padding: 12px; color: #333; }
`;

// Small, dependency-free tooltip: reads the numbers a cell or marker carries
// as data attributes. Hover shows it; a tap (click) pins it until the next tap.
const SCRIPT = `
(function () {
  var tip = document.getElementById('cell-tip');
  var dir = document.body.getAttribute('data-dir') || 'SWEEP_FOLDER';
  var picked = null;
  function text(el) {
    var d = el.dataset;
    var lines = [d.where || ''];
    if (d.value === '') {
      lines.push('no trials yet');
    } else if (d.lo !== '') {
      lines.push('rate ' + Number(d.value).toFixed(3) + '  (n = ' + d.n + ', successes = ' + d.successes + ')');
      lines.push('95% interval ' + Number(d.lo).toFixed(3) + ' to ' + Number(d.hi).toFixed(3));
    } else {
      lines.push('mean ' + Number(d.value).toPrecision(4) + '  (n = ' + d.n + ', successes = ' + d.successes + ')');
    }
    lines.push(d.n + ' of ' + d.planned + ' planned trials' + (Number(d.n) > 0 && Number(d.n) < Number(d.planned) ? ' (incomplete)' : ''));
    if (d.failureJob) lines.push('re-run a trial without success:\\n  recallscape inspect ' + dir + ' --job ' + d.failureJob);
    if (d.successJob) lines.push('re-run a successful trial:\\n  recallscape inspect ' + dir + ' --job ' + d.successJob);
    return lines.join('\\n');
  }
  function place(x, y) {
    var w = tip.offsetWidth, h = tip.offsetHeight;
    var left = Math.min(x + 14, window.innerWidth - w - 8);
    var top = y + 14 + h > window.innerHeight ? Math.max(8, y - h - 14) : y + 14;
    tip.style.left = Math.max(8, left) + 'px';
    tip.style.top = top + 'px';
  }
  function show(el, x, y) { tip.textContent = text(el); tip.style.display = 'block'; place(x, y); }
  function unpick() { if (picked) picked.classList.remove('picked'); picked = null; tip.style.display = 'none'; }
  var marks = document.querySelectorAll('svg .cell, svg .point');
  for (var i = 0; i < marks.length; i++) {
    var el = marks[i];
    // The page has its own tooltip; the SVG <title> stays for standalone files.
    var title = el.querySelector('title');
    if (title) el.removeChild(title);
    el.addEventListener('mouseenter', function (e) { if (!picked) show(e.currentTarget, e.clientX, e.clientY); });
    el.addEventListener('mousemove', function (e) { if (!picked) place(e.clientX, e.clientY); });
    el.addEventListener('mouseleave', function () { if (!picked) tip.style.display = 'none'; });
    el.addEventListener('click', function (e) {
      e.stopPropagation();
      var target = e.currentTarget;
      if (picked === target) { unpick(); return; }
      unpick();
      picked = target;
      target.classList.add('picked');
      var box = target.getBoundingClientRect();
      show(target, box.left + box.width / 2, box.top + box.height / 2);
    });
  }
  document.addEventListener('click', function (e) { if (picked && !tip.contains(e.target)) unpick(); });
  window.addEventListener('scroll', function () { if (picked) unpick(); }, { passive: true });
})();
`;

function metaTable(
  rows: readonly DescribedRow[],
  head: readonly string[] | null,
  valueHtml?: (r: DescribedRow) => string,
): string {
  const e = escapeXml;
  const parts = ['<div class="table-wrap"><table class="meta">'];
  if (head !== null) parts.push(`<thead><tr>${head.map((h) => `<th>${e(h)}</th>`).join('')}</tr></thead>`);
  parts.push('<tbody>');
  for (const r of rows) {
    const value = valueHtml === undefined ? e(r.value) : valueHtml(r);
    const cells = head !== null && head.length === 4 ? [value, e(r.unit), e(r.note)] : [value, e(r.note)];
    parts.push(
      `<tr${r.changed === true ? ' class="changed"' : ''}><th>${e(r.name)}</th>${cells.map((c, i) => `<td${i === cells.length - 1 ? ' class="note"' : ''}>${c}</td>`).join('')}</tr>`,
    );
  }
  parts.push('</tbody></table></div>');
  return parts.join('');
}

/**
 * The self-contained report page: what was simulated (model, sampler, seeds,
 * every parameter, the metrics' definitions), progress, any warnings, then
 * the charts' sections, with a tooltip per cell or marker on hover and on
 * tap. No external resource of any kind (the content security policy
 * forbids fetching one), so it opens from disk and can be mailed as one file.
 */
export function renderReportPage(input: PageInput): string {
  const e = escapeXml;
  const { report } = input;
  const { sweep } = report;
  const { spec } = sweep;
  const d = input.description ?? describeSweep(report, input.generatedAt);
  const pct = completedPercent(report.completedJobs, report.plannedJobs);
  const fraction = report.plannedJobs === 0 ? 0 : report.completedJobs / report.plannedJobs;
  const parts: string[] = [];
  parts.push('<!DOCTYPE html>');
  parts.push('<html lang="en"><head><meta charset="utf-8">');
  parts.push(
    `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:">`,
  );
  parts.push('<meta name="viewport" content="width=device-width, initial-scale=1">');
  parts.push(`<title>${e(spec.name)}: recallscape report</title>`);
  parts.push(`<style>${STYLE}</style></head><body data-dir="${e(shellWord(report.dir))}">`);
  parts.push(`<h1>${e(spec.name)}</h1>`);
  parts.push(
    `<p class="note">Phase diagrams and tables of a recallscape sweep of the model ${e(sweep.model.id)} ${e(sweep.model.version)}. Rates carry 95% intervals; hover over or tap a cell or marker for its numbers and the command that re-runs one of its trials. <a href="#diagrams">Diagrams</a> · <a href="#points">per-point table</a> · <a href="sweep.md">sweep.md</a> (this description as Markdown).</p>`,
  );
  parts.push('<h2 id="sweep">What was simulated</h2>');
  parts.push(metaTable(d.facts, null, (r) => (r.name === 'sweep hash' ? `<code>${e(r.value)}</code>` : e(r.value))));
  parts.push('<h3>Varied parameters</h3>');
  parts.push(
    d.varied.length === 0
      ? '<p>None: every job uses the same parameters.</p>'
      : metaTable(d.varied, ['parameter', 'range', 'unit', 'meaning']),
  );
  parts.push('<h3 id="fixed">Fixed parameters</h3>');
  parts.push(
    '<p class="note">Every other parameter, as resolved for every job; highlighted rows differ from the model’s default.</p>',
  );
  parts.push(metaTable(d.fixed, ['parameter', 'value', 'unit', 'meaning']));
  parts.push('<h3 id="metrics">Metrics</h3>');
  parts.push('<p class="note">Definitions given by the model.</p>');
  parts.push(
    metaTable(
      d.metrics.map((m) => ({ ...m, value: m.note, note: m.value })),
      ['metric', 'meaning', 'unit', 'in this report'],
      (r) => e(r.value),
    ),
  );
  parts.push('<h3 id="progress">Progress</h3>');
  parts.push(
    metaTable(d.progress, null, (r) =>
      r.name === 'jobs with a result'
        ? `<span id="completed">${report.completedJobs} of ${report.plannedJobs} (${pct} complete)</span><span class="progress"><span style="width:${(100 * Math.min(1, fraction)).toFixed(1)}%"></span></span>`
        : e(r.value),
    ),
  );

  if (report.warningCount > 0) {
    parts.push(
      `<h2>Warnings while reading results</h2><div class="warnings" id="warnings"><p>${report.warningCount} problem(s) in the result files; the affected lines were skipped.</p><ul>`,
    );
    // The message names its file and line already.
    for (const w of report.warnings) parts.push(`<li>${e(w.kind)}: ${e(w.message)}</li>`);
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
