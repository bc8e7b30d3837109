import type { Range } from '../../shared/sweep/ranges.js';
import { formatNumber, formatValue, geometricList } from './axis.js';
import { binEdges, binIndex } from './binning.js';
import { MIN_POINTS } from './local-likelihood-field.js';
import type { ReportGroup } from './report-group.js';

/** A continuous axis of a scatter diagram: a range of numbers, linear or logarithmic. */
export interface ScatterAxis {
  readonly param: string;
  readonly lo: number;
  readonly hi: number;
  readonly log: boolean;
  /** Whole numbers only (an integer range, or a list of whole numbers): ticks are whole numbers too. */
  readonly whole: boolean;
}

/** One panel of scattered points, or the words that stand in for a panel with too few. */
export interface ScatterPanel {
  /** "adaptGain in [0.5, 1.375)"; null for the only panel of an unfaceted report. */
  readonly facetText: string | null;
  /** For file names: the facet value or bin number. */
  readonly fileTag: string | null;
  readonly groups: readonly ReportGroup[];
  /** Why this panel is not drawn (too few points), or null. */
  readonly skipped: string | null;
}

export interface ScatterLayout {
  readonly xAxis: ScatterAxis;
  readonly yAxis: ScatterAxis;
  readonly panels: readonly ScatterPanel[];
  /** Varied parameters pooled in every panel (those on no axis, and a facet given up for too few points). */
  readonly pooled: readonly string[];
  /** Why the requested facet was pooled instead, or null. */
  readonly facetNote: string | null;
}

/**
 * Fewest sampled points a panel needs: twice what the smoother itself
 * needs, so a panel's estimate rests on points from more than one corner.
 */
export const MIN_PANEL_POINTS = Math.max(20, 2 * MIN_POINTS);

/** The numeric span of a range (both ends of `between`, or the least and greatest listed number). */
export function scatterAxis(param: string, range: Range | undefined, logAsked = false): ScatterAxis | null {
  if (range === undefined) return null;
  if ('between' in range) {
    const [lo, hi] = range.between;
    return { param, lo, hi, log: range.scale === 'log' || logAsked, whole: range.integer };
  }
  const values = 'among' in range ? range.among : 'list' in range ? range.list : [];
  if (!values.every((v) => typeof v === 'number') || values.length < 2) return null;
  const nums = values as number[];
  return {
    param,
    lo: Math.min(...nums),
    hi: Math.max(...nums),
    log: logAsked || geometricList(nums),
    whole: nums.every(Number.isInteger),
  };
}

function withPoints(groups: readonly ReportGroup[]): ReportGroup[] {
  return groups.filter((g) => g.planned > 0 || g.summary.n > 0);
}

/**
 * Panels for scattered points. A continuous facet is cut into equal bins
 * (log bins on a log range), as many as `maxPanels` allows while every bin
 * keeps MIN_PANEL_POINTS points; if not even two bins can, the facet is
 * pooled and the layout says why. A discrete facet gets one panel per
 * value; a value with too few points gets words instead of a panel.
 */
export function scatterLayout(input: {
  readonly vary: Readonly<Record<string, Range>>;
  readonly x: string;
  readonly y: string;
  readonly facet: string | null;
  readonly maxPanels: number;
  readonly groups: readonly ReportGroup[];
  /** Parameters drawn on a log axis on request. */
  readonly log?: ReadonlySet<string>;
  readonly pooled: readonly string[];
}): ScatterLayout | null {
  const xAxis = scatterAxis(input.x, input.vary[input.x], input.log?.has(input.x) ?? false);
  const yAxis = scatterAxis(input.y, input.vary[input.y], input.log?.has(input.y) ?? false);
  if (xAxis === null || yAxis === null) return null;
  const groups = withPoints(input.groups);
  const tooFew = (n: number): string =>
    `${n} sampled point${n === 1 ? '' : 's'}; a panel needs at least ${MIN_PANEL_POINTS} to estimate a smooth field`;
  const facet = input.facet;
  const range = facet === null ? undefined : input.vary[facet];
  if (facet === null || range === undefined) {
    return {
      xAxis,
      yAxis,
      pooled: input.pooled,
      facetNote: null,
      panels: [
        {
          facetText: null,
          fileTag: null,
          groups,
          skipped: groups.length < MIN_PANEL_POINTS ? tooFew(groups.length) : null,
        },
      ],
    };
  }
  if ('between' in range) {
    const [lo, hi] = range.between;
    const log = range.scale === 'log';
    for (let bins = Math.min(input.maxPanels, Math.floor(groups.length / MIN_PANEL_POINTS)); bins >= 2; bins--) {
      const edges = binEdges(lo, hi, bins, log);
      const members: ReportGroup[][] = Array.from({ length: bins }, () => []);
      for (const g of groups) {
        const v = g.values[facet];
        const i = typeof v === 'number' ? binIndex(edges, log, v) : -1;
        if (i >= 0) members[i]?.push(g);
      }
      if (members.every((m) => m.length >= MIN_PANEL_POINTS)) {
        return {
          xAxis,
          yAxis,
          pooled: input.pooled,
          facetNote: null,
          panels: members.map((m, i) => ({
            facetText: `${facet} in [${formatNumber(edges[i] ?? lo)}, ${formatNumber(edges[i + 1] ?? hi)}${i === bins - 1 ? ']' : ')'}`,
            fileTag: `bin${i + 1}`,
            groups: m,
            skipped: null,
          })),
        };
      }
    }
    return {
      xAxis,
      yAxis,
      pooled: [...input.pooled, facet],
      facetNote: `${facet} is pooled, not split into panels: ${groups.length} sampled points cannot give two panels of at least ${MIN_PANEL_POINTS}.`,
      panels: [
        {
          facetText: null,
          fileTag: null,
          groups,
          skipped: groups.length < MIN_PANEL_POINTS ? tooFew(groups.length) : null,
        },
      ],
    };
  }
  const values = 'among' in range ? range.among : 'list' in range ? range.list : [];
  return {
    xAxis,
    yAxis,
    pooled: input.pooled,
    facetNote: null,
    panels: values.map((value) => {
      const members = groups.filter((g) => g.values[facet] === value);
      return {
        facetText: `${facet} = ${formatValue(value)}`,
        fileTag: formatValue(value),
        groups: members,
        skipped: members.length < MIN_PANEL_POINTS ? tooFew(members.length) : null,
      };
    }),
  };
}
