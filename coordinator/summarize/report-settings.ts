import { z } from 'zod';
import { didYouMean, unknownNameHint } from '../../shared/closest-names.js';
import { InputError } from '../../shared/errors.js';
import { BINS_RULE, BinsSchema } from '../../shared/sweep/bins.js';
import type { Range } from '../../shared/sweep/ranges.js';

export const REPORT_FORMATS = ['csv', 'md', 'svg', 'png', 'html'] as const;
export type ReportFormat = (typeof REPORT_FORMATS)[number];

/** Bins per axis for sampled sweeps when neither the command nor the sweep says. */
export const DEFAULT_BINS = 8;
/** A numeric facet of a sampled sweep gets at most this many panels. */
export const MAX_FACET_BINS = 4;
/** `--facet none` turns faceting off. */
export const NO_FACET = 'none';

export interface ReportChoices {
  readonly x?: string | undefined;
  readonly y?: string | undefined;
  readonly facet?: string | undefined;
  readonly metric?: string | undefined;
  readonly bins?: number | undefined;
  readonly formats?: readonly string[] | undefined;
  readonly pngScale?: number | undefined;
  /** Parameters to draw on a log axis. */
  readonly log?: readonly string[] | undefined;
}

export interface ResolvedSettings {
  /** Null only when the sweep varies nothing (then there is no diagram). */
  readonly x: string | null;
  readonly y: string | null;
  readonly facet: string | null;
  readonly metric: string;
  readonly bins: number;
  readonly formats: ReadonlySet<ReportFormat>;
  /** PNG pixels per SVG unit. */
  readonly pngScale: number;
  /** Parameters drawn on a log axis on request (log ranges and geometric lists are drawn so anyway). */
  readonly log: ReadonlySet<string>;
}

/** PNG pixels per SVG unit when nothing else is asked: sharp in print and on high-density screens. */
export const DEFAULT_PNG_SCALE = 2;
/** PNG scale: 1 is the SVG's own size; 8 makes a panel about 6000 pixels wide, plenty for a poster. */
export const PNG_SCALE_RANGE = { min: 1, max: 8 } as const;
const PngScaleSchema = z.number().int().min(PNG_SCALE_RANGE.min).max(PNG_SCALE_RANGE.max);

function reject(option: string, message: string): never {
  throw new InputError(`${option}: ${message}`, [{ path: option, message }]);
}

/**
 * Axes, metric, bins and formats: the command's options first, then the
 * sweep file's `report` section, then the first varied parameters in file
 * order (x, y, facet) and `success`. A default that collides with an explicit
 * choice is skipped rather than reported: only what the user typed can be wrong.
 */
export function resolveSettings(
  choices: ReportChoices,
  fromSweep: ReportChoices,
  varied: readonly string[],
): ResolvedSettings {
  const allowed = varied.length === 0 ? '(none: the sweep varies no parameter)' : varied.join(', ');
  const explicit = new Map<string, string>();
  for (const axis of ['x', 'y', 'facet'] as const) {
    const name = choices[axis];
    if (name === undefined) continue;
    if (axis === 'facet' && name === NO_FACET) continue;
    if (!varied.includes(name))
      reject(
        `--${axis}`,
        `"${name}" is not a varied parameter of this sweep; ${didYouMean(name, axis === 'facet' ? [...varied, NO_FACET] : varied) ?? `allowed: ${allowed}${axis === 'facet' ? `, or ${NO_FACET}` : ''}`}`,
      );
    const clash = explicit.get(name);
    if (clash !== undefined) reject(`--${axis}`, `"${name}" is already --${clash}; each axis needs its own parameter`);
    explicit.set(name, axis);
  }
  const taken = new Set(explicit.keys());
  const pick = (axis: 'x' | 'y' | 'facet'): string | null => {
    const own = choices[axis];
    if (own !== undefined) return own === NO_FACET && axis === 'facet' ? null : own;
    const preset = fromSweep[axis];
    if (preset !== undefined && varied.includes(preset) && !taken.has(preset)) {
      taken.add(preset);
      return preset;
    }
    const next = varied.find((n) => !taken.has(n));
    if (next === undefined) return null;
    taken.add(next);
    return next;
  };
  const x = pick('x');
  const y = x === null ? null : pick('y');
  const facet = y === null ? null : pick('facet');

  const bins = choices.bins ?? fromSweep.bins ?? DEFAULT_BINS;
  if (!BinsSchema.safeParse(bins).success) reject('--bins', `must be ${BINS_RULE}, got ${String(bins)}`);

  const formats = new Set<ReportFormat>();
  for (const f of choices.formats ?? REPORT_FORMATS) {
    const name = f.trim().toLowerCase();
    if (!(REPORT_FORMATS as readonly string[]).includes(name))
      reject('--format', `unknown format "${f}"; ${unknownNameHint(name, REPORT_FORMATS)}`);
    formats.add(name as ReportFormat);
  }
  if (formats.size === 0) reject('--format', `name at least one of ${REPORT_FORMATS.join(', ')}`);

  const pngScale = choices.pngScale ?? DEFAULT_PNG_SCALE;
  if (!PngScaleSchema.safeParse(pngScale).success)
    reject(
      '--png-scale',
      `must be a whole number from ${PNG_SCALE_RANGE.min} to ${PNG_SCALE_RANGE.max}, got ${String(pngScale)}`,
    );

  const metric = choices.metric ?? fromSweep.metric ?? 'success';
  const logOption = choices.log !== undefined ? '--log' : 'report.log';
  const log = new Set<string>();
  for (const name of choices.log ?? fromSweep.log ?? []) {
    if (!varied.includes(name))
      reject(logOption, `"${name}" is not a varied parameter of this sweep; allowed: ${allowed}`);
    log.add(name);
  }
  return { x, y, facet, metric, bins, formats, pngScale, log };
}

/** After the scan, when the metrics are known: InputError for an unknown --metric. */
export function checkMetric(metric: string, known: readonly string[], fromOption: boolean): void {
  if (known.includes(metric)) return;
  const option = fromOption ? '--metric' : 'report.metric';
  reject(
    option,
    `no scalar metric "${metric}" in the results; ${unknownNameHint(metric, known, 'allowed:', known.length)}`,
  );
}

/**
 * A log axis needs positive numbers: every listed or stepped value, or both
 * ends of an interval, of each parameter asked for on a log axis.
 */
export function checkLogAxes(
  log: ReadonlySet<string>,
  vary: Readonly<Record<string, Range>>,
  fromOption: boolean,
): void {
  for (const name of log) {
    const range = vary[name];
    if (range === undefined) continue;
    const values: unknown[] =
      'between' in range
        ? [...range.between]
        : 'among' in range
          ? [...range.among]
          : 'list' in range
            ? [...range.list]
            : [range.from, range.to];
    const bad = values.find((v) => typeof v !== 'number' || !(v > 0));
    if (bad !== undefined)
      reject(
        fromOption ? '--log' : 'report.log',
        `${name} has the value ${JSON.stringify(bad)}; a log axis needs numbers greater than 0`,
      );
  }
}
