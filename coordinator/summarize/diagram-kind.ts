import type { SweepSpec } from '../../shared/sweep/schema.js';
import type { ResolvedSettings } from './report-settings.js';

/** Heat maps of cells (grid sweeps, and the fallback), or markers over a smooth field (sampled sweeps). */
export type DiagramKind = 'cells' | 'scatter';

/**
 * Which diagrams a report draws. Scattered points (random, lhs, sobol)
 * with numbers on both axes get markers over a smooth estimate; a grid, or
 * an axis of strings or booleans, gets cells.
 */
export function diagramKindOf(spec: SweepSpec, settings: Pick<ResolvedSettings, 'x' | 'y'>): DiagramKind {
  if (spec.sampler.kind === 'grid' || settings.x === null || settings.y === null) return 'cells';
  return numericAxis(spec, settings.x) && numericAxis(spec, settings.y) ? 'scatter' : 'cells';
}

/** A range of numbers with more than one value: something a smooth estimate can run along. */
function numericAxis(spec: SweepSpec, param: string): boolean {
  const range = spec.vary[param];
  if (range === undefined) return false;
  if ('between' in range) return true;
  const values = 'among' in range ? range.among : 'list' in range ? range.list : null;
  return values !== null && values.length > 1 && values.every((v) => typeof v === 'number');
}
