import { canonicalJson } from '../../shared/canonical-json.js';
import type { Range } from '../../shared/sweep/ranges.js';
import { formatNumber } from './axis.js';
import type { CollectedReport } from './collect.js';
import { unitOf } from './param-label.js';

/** One line of a description table: a name, its value, and words about it. */
export interface DescribedRow {
  readonly name: string;
  readonly value: string;
  readonly unit: string;
  readonly note: string;
  /** For parameters: true when the sweep sets a value other than the model's default. */
  readonly changed?: boolean;
}

/** What the report says about the sweep, shared by index.html and sweep.md. */
export interface SweepDescription {
  readonly facts: readonly DescribedRow[];
  readonly varied: readonly DescribedRow[];
  /** Every parameter not varied, with its resolved value. */
  readonly fixed: readonly DescribedRow[];
  readonly metrics: readonly DescribedRow[];
  readonly progress: readonly DescribedRow[];
}

/** Values listed in full up to this many; longer lists show the first and last few. */
const LIST_SHOWN = 12;

function valueText(value: unknown): string {
  if (typeof value === 'number') return formatNumber(value);
  if (typeof value === 'string' || typeof value === 'boolean') return String(value);
  if (value === undefined) return '(unset)';
  const json = JSON.stringify(value);
  return json.length > 120 ? `${json.slice(0, 117)}...` : json;
}

function listText(values: readonly unknown[]): string {
  if (values.length <= LIST_SHOWN) return values.map(valueText).join(', ');
  const head = values.slice(0, 5).map(valueText).join(', ');
  const tail = values.slice(-2).map(valueText).join(', ');
  return `${head}, ..., ${tail} (${values.length} values)`;
}

/** A range as people say it: "from 0 to 1 in 11 steps", "between 20 and 200, log scale". */
export function rangeText(range: Range): string {
  if ('list' in range) return `list: ${listText(range.list)}`;
  if ('among' in range) return `among ${listText(range.among)}`;
  if ('between' in range) {
    const [lo, hi] = range.between;
    const extra = [range.scale === 'log' ? 'log scale' : null, range.integer ? 'whole numbers' : null].filter(
      (t) => t !== null,
    );
    return `between ${formatNumber(lo)} and ${formatNumber(hi)}${extra.length > 0 ? `, ${extra.join(', ')}` : ''}`;
  }
  return `from ${formatNumber(range.from)} to ${formatNumber(range.to)} in ${range.steps} steps${range.scale === 'log' ? ', log scale' : ''}`;
}

/**
 * Everything needed to interpret the report without the sweep folder: the
 * model and its version, sampler, replicates, root seed, hash, code
 * version and dates; every varied range; every other parameter's resolved
 * value (marked where the sweep differs from the model's default); and the
 * model's own definition of each metric.
 */
export function describeSweep(report: CollectedReport, generatedAt: string): SweepDescription {
  const { sweep, settings } = report;
  const { spec, model } = sweep;
  const sampler =
    spec.sampler.kind === 'grid'
      ? 'grid (every combination of the ranges)'
      : `${spec.sampler.kind}, ${spec.sampler.points} points`;
  const facts: DescribedRow[] = [
    { name: 'model', value: `${model.id} ${model.version}`, unit: '', note: model.summary },
    { name: 'sampler', value: sampler, unit: '', note: '' },
    {
      name: 'replicates per point',
      value: String(spec.replicates),
      unit: '',
      note: 'trials per parameter point, each with its own seed',
    },
    { name: 'root seed', value: String(spec.seed), unit: '', note: 'every job seed derives from it and the job key' },
    {
      name: 'sweep hash',
      value: sweep.hash,
      unit: '',
      note: 'identifies the jobs: model, version, parameters, sampler, replicates, seed',
    },
    { name: 'sweep file', value: sweep.source ?? '(none recorded)', unit: '', note: '' },
    { name: 'code version', value: sweep.codeVersion, unit: '', note: 'recallscape that created the sweep folder' },
    { name: 'created at', value: sweep.createdAt, unit: '', note: '' },
    { name: 'report built at', value: generatedAt, unit: '', note: '' },
  ];
  const info = model.paramInfo;
  const varied = sweep.variedNames.map((name) => {
    const range = spec.vary[name];
    return {
      name,
      value: range === undefined ? '' : rangeText(range),
      unit: unitOf(name, info),
      note: info[name]?.description ?? '',
    };
  });
  const defaults = model.params.safeParse({});
  const defaultValues: Readonly<Record<string, unknown>> = defaults.success
    ? (defaults.data as Record<string, unknown>)
    : {};
  const formulas = spec.derived ?? {};
  for (const name of report.computed) {
    varied.push({
      name,
      value: `computed: ${formulas[name] ?? '(formula)'}`,
      unit: unitOf(name, info),
      note: info[name]?.description ?? '',
    });
  }
  const variedSet = new Set([...sweep.variedNames, ...report.computed]);
  const names = [...new Set([...Object.keys(info), ...Object.keys(sweep.baseParams)])].filter((n) => !variedSet.has(n));
  const fixed = names.map((name) => {
    const value = sweep.baseParams[name];
    const changed = canonicalJson(value ?? null) !== canonicalJson(defaultValues[name] ?? null);
    return {
      name,
      value: valueText(value),
      unit: unitOf(name, info),
      note: `${info[name]?.description ?? ''}${changed ? ` (model default: ${valueText(defaultValues[name])})` : ''}`,
      changed,
    };
  });
  const metricInfo = model.metricInfo ?? {};
  const metricNames = ['success', ...[...report.metricKinds.keys()].sort()];
  for (const name of Object.keys(metricInfo)) if (!metricNames.includes(name)) metricNames.push(name);
  const metrics = metricNames.map((name) => ({
    name,
    value:
      name === report.metric.name
        ? 'shown in the diagrams'
        : report.metricKinds.has(name) || name === 'success'
          ? 'summarised in the tables'
          : 'kept in the records only',
    unit: metricInfo[name]?.unit ?? '',
    note: metricInfo[name]?.description ?? '(the model gives no description)',
  }));
  const progress: DescribedRow[] = [
    { name: 'jobs planned', value: String(report.plannedJobs), unit: '', note: '' },
    { name: 'jobs with a result', value: String(report.completedJobs), unit: '', note: '' },
    { name: 'jobs with errors and no result', value: String(report.failedJobs), unit: '', note: '' },
    {
      name: 'errors by kind',
      value:
        report.failuresByKind.length === 0 ? 'none' : report.failuresByKind.map(([k, n]) => `${k}: ${n}`).join(', '),
      unit: '',
      note: 'attempts that ended in an error (a retried job can count more than once)',
    },
    {
      name: 'shown',
      value: [
        `metric ${report.metric.name}`,
        settings.x === null ? null : `x ${settings.x}`,
        settings.y === null ? null : `y ${settings.y}`,
        settings.facet === null ? null : `one panel per ${settings.facet}`,
        report.pooled.length === 0 ? null : `pooled over ${report.pooled.join(', ')}`,
      ]
        .filter((s) => s !== null)
        .join('; '),
      unit: '',
      note: '',
    },
  ];
  return { facts, varied, fixed, metrics, progress };
}

function md(text: string): string {
  return text.replace(/\|/g, '\\|').replace(/\r?\n/g, ' ');
}

function mdTable(head: readonly string[], rows: readonly (readonly string[])[]): string[] {
  return [
    `| ${head.join(' | ')} |`,
    `| ${head.map(() => '---').join(' | ')} |`,
    ...rows.map((r) => `| ${r.map(md).join(' | ')} |`),
  ];
}

/** `sweep.md`: the description as Markdown, to travel with the tables and diagrams. */
export function sweepMarkdown(name: string, d: SweepDescription): string {
  const lines = [
    `# ${name}: what was simulated`,
    '',
    ...mdTable(
      ['', 'value', 'note'],
      d.facts.map((r) => [r.name, r.value, r.note]),
    ),
    '',
    '## Varied parameters',
    '',
    ...(d.varied.length === 0
      ? ['None: every job uses the same parameters.']
      : mdTable(
          ['parameter', 'range', 'unit', 'meaning'],
          d.varied.map((r) => [r.name, r.value, r.unit, r.note]),
        )),
    '',
    '## Fixed parameters',
    '',
    'Every other parameter, as resolved for every job. **Bold**: set by the sweep to something other than the model’s default.',
    '',
    ...mdTable(
      ['parameter', 'value', 'unit', 'meaning'],
      d.fixed.map((r) => [
        r.changed === true ? `**${r.name}**` : r.name,
        r.changed === true ? `**${r.value}**` : r.value,
        r.unit,
        r.note,
      ]),
    ),
    '',
    '## Metrics',
    '',
    'Definitions given by the model.',
    '',
    ...mdTable(
      ['metric', 'unit', 'meaning', 'in this report'],
      d.metrics.map((r) => [r.name, r.unit, r.note, r.value]),
    ),
    '',
    '## Progress',
    '',
    ...mdTable(
      ['', 'value', 'note'],
      d.progress.map((r) => [r.name, r.value, r.note]),
    ),
    '',
  ];
  return lines.join('\n');
}
