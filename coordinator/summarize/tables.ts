import { formatNumber } from './axis.js';
import type { MetricKind } from './group-summary.js';
import type { ReportGroup } from './report-group.js';
import { wilsonInterval } from './wilson.js';

export type TableCell = number | string | boolean | null;

/** A leading column of the table: a parameter value, or one edge of a bin. */
export interface DimensionColumn {
  readonly name: string;
  /** Where a person reads it: `name (unit)`. */
  readonly label: string;
}

export interface SummaryTable {
  readonly columns: readonly string[];
  readonly rows: readonly (readonly TableCell[])[];
  /** The same table for people: combined interval and mean ± sd columns. */
  readonly display: { readonly columns: readonly string[]; readonly rows: readonly (readonly string[])[] };
}

/**
 * The per-point table: varied values (or bin edges), trials done and
 * planned, successes, success rate with its 95% Wilson interval, and mean and
 * sample sd of every other scalar metric (booleans as rates). Metrics that
 * were null in some trials get a `<metric>_n` column with their own count.
 */
export function buildTable(
  dims: readonly DimensionColumn[],
  rows: readonly Pick<ReportGroup, 'dims' | 'planned' | 'summary'>[],
  kinds: ReadonlyMap<string, MetricKind>,
): SummaryTable {
  const metricNames = [...kinds.keys()].sort();
  const partial = new Set(
    metricNames.filter((m) => rows.some((r) => (r.summary.metrics.get(m)?.count ?? 0) < r.summary.n)),
  );
  const columns: string[] = [
    ...dims.map((d) => d.name),
    'n',
    'planned',
    'successes',
    'success_rate',
    'success_lo',
    'success_hi',
  ];
  const displayColumns: string[] = [
    ...dims.map((d) => d.label),
    'n / planned',
    'successes',
    'success rate [95% Wilson]',
  ];
  for (const m of metricNames) {
    if (kinds.get(m) === 'boolean') columns.push(`${m}_rate`);
    else columns.push(`${m}_mean`, `${m}_sd`);
    if (partial.has(m)) columns.push(`${m}_n`);
    displayColumns.push(kinds.get(m) === 'boolean' ? `${m} (rate)` : `${m} (mean ± sd)`);
  }
  const out: TableCell[][] = [];
  const display: string[][] = [];
  for (const row of rows) {
    const s = row.summary;
    const interval = wilsonInterval(s.successes, s.n);
    const rate = s.n === 0 ? null : s.successes / s.n;
    const cells: TableCell[] = [
      ...row.dims,
      s.n,
      row.planned,
      s.successes,
      rate,
      interval?.lo ?? null,
      interval?.hi ?? null,
    ];
    const shown: string[] = [
      ...row.dims.map((d) => (d === null ? '' : typeof d === 'number' ? formatNumber(d) : String(d))),
      `${s.n} / ${row.planned}`,
      String(s.successes),
      rate === null || interval === null
        ? ''
        : `${rate.toFixed(3)} [${interval.lo.toFixed(3)}, ${interval.hi.toFixed(3)}]`,
    ];
    for (const m of metricNames) {
      const stats = s.metrics.get(m);
      const mean = stats?.meanOrNull() ?? null;
      const sd = stats?.sd() ?? null;
      if (kinds.get(m) === 'boolean') {
        cells.push(mean);
        shown.push(mean === null ? '' : mean.toFixed(3));
      } else {
        cells.push(mean, sd);
        shown.push(
          mean === null ? '' : sd === null ? formatNumber(mean) : `${formatNumber(mean)} ± ${formatNumber(sd)}`,
        );
      }
      if (partial.has(m)) cells.push(stats?.count ?? 0);
    }
    out.push(cells);
    display.push(shown);
  }
  return { columns, rows: out, display: { columns: displayColumns, rows: display } };
}

function csvField(value: TableCell): string {
  if (value === null) return '';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : '';
  const text = String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/**
 * CSV: header row, plain numbers at full precision, empty = missing. Fields
 * are quoted as RFC 4180 says, but lines end in LF, not CRLF: LF is what
 * pandas and R read by default.
 */
export function toCsv(table: SummaryTable): string {
  const lines = [table.columns.map(csvField).join(',')];
  for (const row of table.rows) lines.push(row.map(csvField).join(','));
  return `${lines.join('\n')}\n`;
}

function mdCell(text: string): string {
  return text.replace(/\|/g, '\\|').replace(/\r?\n/g, ' ');
}

/** A Markdown (pipe) table of the display form, numbers right-aligned. */
export function toMarkdown(table: SummaryTable, heading: string): string {
  const { columns, rows } = table.display;
  const lines = [
    `# ${heading}`,
    '',
    `| ${columns.map(mdCell).join(' | ')} |`,
    `| ${columns.map(() => '---:').join(' | ')} |`,
  ];
  for (const row of rows) lines.push(`| ${row.map(mdCell).join(' | ')} |`);
  return `${lines.join('\n')}\n`;
}
