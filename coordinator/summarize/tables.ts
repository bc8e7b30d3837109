import { wilsonInterval } from '../../shared/wilson.js';
import { formatNumber } from './axis.js';
import type { MetricKind } from './group-summary.js';
import type { ParamColumn, ReportGroup } from './report-group.js';
import { formatMeanSd, formatRateInterval } from './significant.js';

export type TableCell = number | string | boolean | null;

export interface SummaryTable {
  readonly columns: readonly string[];
  readonly rows: readonly (readonly TableCell[])[];
  /** The same table for people: combined interval and mean ± sd columns, digits matching the uncertainty. */
  readonly display: { readonly columns: readonly string[]; readonly rows: readonly (readonly string[])[] };
}

/** Characters of a job key shown to people; `inspect` takes any unique prefix. */
export const SHORT_KEY = 12;

/**
 * The per-point table: parameter values, trials done and planned, successes,
 * success rate with its 95% Wilson interval, mean and sample sd of every
 * other scalar metric (booleans as rates), and the job key of one successful
 * and one unsuccessful trial (for `inspect`). Metrics that were null in some
 * trials get a `<metric>_n` column with their own count.
 */
export function buildTable(
  params: readonly ParamColumn[],
  rows: readonly Pick<ReportGroup, 'values' | 'planned' | 'summary'>[],
  kinds: ReadonlyMap<string, MetricKind>,
): SummaryTable {
  const metricNames = [...kinds.keys()].sort();
  const partial = new Set(
    metricNames.filter((m) => rows.some((r) => (r.summary.metrics.get(m)?.count ?? 0) < r.summary.n)),
  );
  const columns: string[] = [
    ...params.map((d) => d.name),
    'n',
    'planned',
    'successes',
    'success_rate',
    'success_lo',
    'success_hi',
  ];
  const displayColumns: string[] = [
    ...params.map((d) => d.label),
    'n / planned',
    'successes',
    'success rate [95% Wilson]',
  ];
  for (const m of metricNames) {
    if (kinds.get(m) === 'boolean') columns.push(`${m}_rate`);
    else columns.push(`${m}_mean`, `${m}_sd`);
    if (partial.has(m)) columns.push(`${m}_n`);
    displayColumns.push(kinds.get(m) === 'boolean' ? `${m} (rate [95% Wilson])` : `${m} (mean ± sd)`);
  }
  columns.push('success_job', 'failure_job');
  displayColumns.push('a trial to inspect');
  const out: TableCell[][] = [];
  const display: string[][] = [];
  for (const row of rows) {
    const s = row.summary;
    const interval = wilsonInterval(s.successes, s.n);
    const rate = s.n === 0 ? null : s.successes / s.n;
    const cells: TableCell[] = [
      ...params.map((p) => row.values[p.name] ?? null),
      s.n,
      row.planned,
      s.successes,
      rate,
      interval?.lo ?? null,
      interval?.hi ?? null,
    ];
    const shown: string[] = [
      ...params.map((p) => {
        const v = row.values[p.name];
        return v === undefined ? '' : typeof v === 'number' ? formatNumber(v) : String(v);
      }),
      `${s.n} / ${row.planned}`,
      String(s.successes),
      rate === null || interval === null ? '' : formatRateInterval(rate, interval.lo, interval.hi),
    ];
    for (const m of metricNames) {
      const stats = s.metrics.get(m);
      const mean = stats?.meanOrNull() ?? null;
      const sd = stats?.sd() ?? null;
      if (kinds.get(m) === 'boolean') {
        cells.push(mean);
        const count = stats?.count ?? 0;
        const hits = Math.round((mean ?? 0) * count);
        const ci = wilsonInterval(hits, count);
        shown.push(mean === null || ci === null ? '' : formatRateInterval(mean, ci.lo, ci.hi));
      } else {
        cells.push(mean, sd);
        shown.push(mean === null ? '' : formatMeanSd(mean, sd));
      }
      if (partial.has(m)) cells.push(stats?.count ?? 0);
    }
    cells.push(s.successKey, s.failureKey);
    shown.push(
      [
        s.successKey === null ? null : `success ${s.successKey.slice(0, SHORT_KEY)}`,
        s.failureKey === null ? null : `no success ${s.failureKey.slice(0, SHORT_KEY)}`,
      ]
        .filter((t) => t !== null)
        .join(', '),
    );
    out.push(cells);
    display.push(shown);
  }
  return { columns, rows: out, display: { columns: displayColumns, rows: display } };
}

export function csvField(value: TableCell): string {
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
export function toCsv(table: Pick<SummaryTable, 'columns' | 'rows'>): string {
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
