import type { ResolvedShape } from './params.js';
import type { PatternSet } from './patterns.js';
import { type TrainedNetwork, unitClasses } from './training.js';

/**
 * The units the recall loop updates, and how many network units each one
 * stands for.
 *
 * Without noise, recall treats alike every unit of one class inside one
 * hypercolumn (same weights, same bias, same cue, same start), and every
 * hypercolumn with the same number of units of each class (same softmax):
 * in exact arithmetic their states are equal at every step. The loop then
 * updates one representative per class of each kind of hypercolumn and
 * counts it as many times as it occurs: at most nP + 1 representatives per
 * kind whatever M is (at (25, 100) with 12 patterns, at most 325 instead of
 * 2,500 units). The arithmetic of each unit is unchanged; only sums over
 * equal terms are taken as a product (3·x instead of x + x + x), which
 * changes the last bits of a sum, not its meaning.
 *
 * With noise every unit draws its own input, so each unit is its own
 * representative (`unitLayout`), counted once: the products with 1 are
 * exact and the loop computes what it always did, bit for bit.
 */
export interface RecallLayout {
  /** Representatives: units updated by the loop. */
  readonly size: number;
  /** Whether any representative stands for more than one unit (else every count below is 1). */
  readonly counted: boolean;
  /** Kinds of hypercolumn: representatives typeStart[t] .. typeStart[t+1]-1 make up kind t. */
  readonly types: number;
  readonly typeStart: Int32Array;
  /** Hypercolumns of kind t (for the pattern matches, which average over hypercolumns). */
  readonly typeWeight: Float64Array;
  /** Class of each representative. */
  readonly repClass: Int32Array;
  /** Units a representative stands for inside its hypercolumn (for the softmax sum). */
  readonly repCount: Float64Array;
  /** Units a representative stands for in the whole network (for the class sums). */
  readonly repWeight: Float64Array;
  /** patternRep[k * types + t]: the representative of pattern k's active unit in hypercolumns of kind t. */
  readonly patternRep: Int32Array;
}

/** Every unit its own representative, every hypercolumn its own kind: the loop as written per unit. */
export function unitLayout(net: TrainedNetwork, set: PatternSet, shape: ResolvedShape): RecallLayout {
  const { N, H, M } = shape;
  const typeStart = new Int32Array(H + 1);
  for (let h = 0; h <= H; h++) typeStart[h] = h * M;
  const patternRep = new Int32Array(set.patterns.length * H);
  set.patterns.forEach((pattern, k) => {
    for (let h = 0; h < H; h++) patternRep[k * H + h] = h * M + (pattern[h] as number);
  });
  return {
    size: N,
    counted: false,
    types: H,
    typeStart,
    typeWeight: new Float64Array(H).fill(1),
    repClass: net.classOf,
    repCount: new Float64Array(N).fill(1),
    repWeight: new Float64Array(N).fill(1),
    patternRep,
  };
}

/**
 * One representative per class of each kind of hypercolumn (for recall
 * without noise). Kinds and representatives keep the order in which their
 * first unit comes, so the layout of a network whose units are all
 * different is the unit layout.
 */
export function sharedLayout(net: TrainedNetwork, set: PatternSet, shape: ResolvedShape): RecallLayout {
  const { M } = shape;
  const { classOf } = net;
  const list = hypercolumnKinds(classOf, net.G, shape);
  const types = list.length;
  const size = list.reduce((n, kind) => n + kind.classes.length, 0);
  const typeStart = new Int32Array(types + 1);
  const typeWeight = new Float64Array(types);
  const repClass = new Int32Array(size);
  const repCount = new Float64Array(size);
  const repWeight = new Float64Array(size);
  const nPatterns = set.patterns.length;
  const patternRep = new Int32Array(nPatterns * types);
  let r = 0;
  list.forEach((kind, t) => {
    typeStart[t] = r;
    typeWeight[t] = kind.hypercolumns.length;
    const first = kind.hypercolumns[0] as number;
    kind.classes.forEach((g, x) => {
      repClass[r + x] = g;
      repCount[r + x] = kind.counts[x] as number;
      repWeight[r + x] = (kind.counts[x] as number) * kind.hypercolumns.length;
    });
    // Pattern k has one active unit per hypercolumn, alone in its class there: find its class in this kind.
    for (let k = 0; k < nPatterns; k++) {
      const unit = first * M + ((set.patterns[k] as readonly number[])[first] as number);
      patternRep[k * types + t] = r + kind.classes.indexOf(classOf[unit] as number);
    }
    r += kind.classes.length;
  });
  typeStart[types] = size;
  return { size, counted: size < shape.N, types, typeStart, typeWeight, repClass, repCount, repWeight, patternRep };
}

/**
 * The size of sharedLayout for a pattern set, without training: the classes
 * follow from the patterns alone (training.ts, unitClasses). For cost estimates.
 */
export function sharedLayoutSize(set: PatternSet, shape: ResolvedShape): number {
  const { classOf, classSets } = unitClasses(set, shape);
  return hypercolumnKinds(classOf, classSets.length, shape).reduce((n, kind) => n + kind.classes.length, 0);
}

interface HypercolumnKind {
  /** Classes present, in order of first unit. */
  readonly classes: number[];
  /** Units of each of those classes in one hypercolumn of this kind. */
  readonly counts: number[];
  /** The hypercolumns of this kind, in order. */
  readonly hypercolumns: number[];
}

/** Hypercolumns grouped by how many units of each class they hold, in order of first hypercolumn. */
function hypercolumnKinds(classOf: Int32Array, G: number, shape: ResolvedShape): HypercolumnKind[] {
  const { H, M } = shape;
  // Built once per recall of every trial: counts in a scratch array, no per-unit search or allocation.
  const countOf = new Int32Array(G);
  const kinds = new Map<string, HypercolumnKind>();
  for (let h = 0; h < H; h++) {
    const classes: number[] = [];
    for (let i = h * M; i < (h + 1) * M; i++) {
      const g = classOf[i] as number;
      const seen = countOf[g] as number;
      countOf[g] = seen + 1;
      if (seen === 0) classes.push(g);
    }
    // The order of classes inside a hypercolumn does not change its dynamics: the key is sorted.
    const sorted = classes.slice().sort((x, y) => x - y);
    let key = '';
    for (const g of sorted) key += `${g}*${countOf[g] as number},`;
    const kind = kinds.get(key);
    if (kind === undefined)
      kinds.set(key, { classes, counts: classes.map((g) => countOf[g] as number), hypercolumns: [h] });
    else kind.hypercolumns.push(h);
    for (const g of classes) countOf[g] = 0;
  }
  return [...kinds.values()];
}
