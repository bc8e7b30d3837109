import type { Command } from 'commander';
import { InputError } from '../../shared/errors.js';
import { MAX_BINS, MIN_BINS } from '../../shared/sweep/bins.js';
import { action, parseWholeNumber, printWarning } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { completedPercent } from '../completed-percent.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { displayPath } from '../shell-text.js';
import { buildReport } from '../summarize/build-report.js';
import { DEFAULT_PNG_SCALE, PNG_SCALE_RANGE, REPORT_FORMATS, type ReportFormat } from '../summarize/report-settings.js';

interface ReportFlags extends ModelCliOptions {
  readonly x?: string;
  readonly y?: string;
  readonly facet?: string;
  readonly metric?: string;
  readonly format?: string;
  readonly bins?: string;
  readonly log?: string;
  readonly pngScale?: string;
}

/** Warnings printed in the terminal; the page lists more. */
const MAX_PRINTED_WARNINGS = 10;

function parseFormats(text: string | undefined): ReportFormat[] | undefined {
  if (text === undefined) return undefined;
  const names = text
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '');
  for (const name of names) {
    if (!(REPORT_FORMATS as readonly string[]).includes(name)) {
      throw new InputError(
        `--format: unknown format "${name}"; allowed: ${REPORT_FORMATS.join(', ')} (comma-separated)`,
        [{ path: '--format', message: `allowed: ${REPORT_FORMATS.join(', ')}` }],
      );
    }
  }
  if (names.length === 0)
    throw new InputError(`--format: name at least one of ${REPORT_FORMATS.join(', ')}`, [
      { path: '--format', message: 'empty' },
    ]);
  return names as ReportFormat[];
}

export function registerReport(program: Command): void {
  defineCommand(program, 'report')
    .option(
      '--x <param>',
      'varied parameter on the horizontal axis (default: report.x of the sweep, else the first varied parameter)',
    )
    .option(
      '--y <param>',
      'varied parameter on the vertical axis (default: report.y, else the second varied parameter)',
    )
    .option(
      '--facet <param>',
      'varied parameter with one diagram per value, or "none" (default: report.facet, else the third varied parameter)',
    )
    .option(
      '--metric <name>',
      'metric to colour the cells by: success or another scalar metric of the records (default: report.metric, else success)',
    )
    .option('--format <list>', `comma-separated outputs among ${REPORT_FORMATS.join(',')} (default: all)`)
    .option(
      '--bins <n>',
      'bins per axis where a continuous range is drawn as cells, and most panels of a continuous facet (default: report.bins, else 8)',
    )
    .option(
      '--log <params>',
      'comma-separated varied parameters to draw on a log axis (default: report.log; ranges with scale: log and lists spaced by ratio are drawn so anyway)',
    )
    .option(
      '--png-scale <n>',
      `PNG pixels per SVG unit, ${PNG_SCALE_RANGE.min} to ${PNG_SCALE_RANGE.max} (default: ${DEFAULT_PNG_SCALE}, sharp in print)`,
    )
    .addOption(modelsOption())
    .action(
      action(async (dir: string, flags: ReportFlags) => {
        await useModelOptions(flags);
        const bins = flags.bins === undefined ? undefined : parseWholeNumber('--bins', flags.bins, MIN_BINS, MAX_BINS);
        const formats = parseFormats(flags.format);
        const pngScale =
          flags.pngScale === undefined
            ? undefined
            : parseWholeNumber('--png-scale', flags.pngScale, PNG_SCALE_RANGE.min, PNG_SCALE_RANGE.max);
        const result = await buildReport({
          dir,
          ...(flags.x === undefined ? {} : { x: flags.x }),
          ...(flags.y === undefined ? {} : { y: flags.y }),
          ...(flags.facet === undefined ? {} : { facet: flags.facet }),
          ...(flags.metric === undefined ? {} : { metric: flags.metric }),
          ...(formats === undefined ? {} : { formats }),
          ...(bins === undefined ? {} : { bins }),
          ...(pngScale === undefined ? {} : { pngScale }),
          ...(flags.log === undefined ? {} : { log: parseNameList(flags.log) }),
        });
        for (const w of result.warnings.slice(0, MAX_PRINTED_WARNINGS)) {
          printWarning(`${w.kind}: ${w.message}`);
        }
        const printed = Math.min(MAX_PRINTED_WARNINGS, result.warnings.length);
        if (result.warningCount > printed) {
          // The true remainder: the builder keeps only the first few hundred warnings but counts them all.
          const where = result.indexHtml === null ? '' : ` (index.html lists the first ${result.warnings.length})`;
          printWarning(`... ${result.warningCount - printed} more${where}`);
        }
        const lines = [
          `completed ${result.completedJobs} of ${result.plannedJobs} jobs (${completedPercent(result.completedJobs, result.plannedJobs)})` +
            (result.failedJobs > 0 ? `; ${result.failedJobs} had errors and have no result` : '') +
            (result.incompleteCells > 0
              ? `; ${result.incompleteCells} diagram cells have fewer trials than planned`
              : '') +
            (result.emptyCells > 0 ? `; ${result.emptyCells} diagram cells have no trials yet` : ''),
          `wrote ${result.files.length} file${result.files.length === 1 ? '' : 's'} to ${displayPath(result.reportDir)}/:`,
          ...result.files.map((f) => `  ${displayPath(f)}`),
        ];
        process.stdout.write(`${lines.join('\n')}\n`);
      }),
    );
}

/** "a, b" -> ["a", "b"]; empty entries dropped (the names are checked against the sweep later). */
function parseNameList(text: string): string[] {
  return text
    .split(',')
    .map((n) => n.trim())
    .filter((n) => n !== '');
}
