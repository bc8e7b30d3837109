import type { Model, RunOptions, RunOutput, TracePanel } from '../../model.js';
import { createRandom } from '../../random.js';
import { estimateCost } from './cost.js';
import { DecisionWatch } from './decision-watch.js';
import { metricInfo } from './metric-info.js';
import { type BcpnnParams, bcpnnParamsSchema, paramInfo, resolveShape } from './params.js';
import { achievedOverlap, type PatternSet } from './patterns.js';
import { DIVERGED, Recaller } from './recall.js';
import { scoreRecall } from './scoring.js';
import { type TrainedNetwork, train } from './training.js';
import { makePatternSet } from './trial-patterns.js';

export { makePatternSet };

export interface TrialParts {
  readonly set: PatternSet;
  readonly net: TrainedNetwork;
}

/** Training alone (exposed for benchmarks and tests). */
export function trainTrial(p: BcpnnParams, seed: number): TrialParts {
  const set = makePatternSet(p, seed);
  return { set, net: train(set, p, resolveShape(p)) };
}

/** Recall of every sequence and scoring (exposed for benchmarks and tests). */
export function recallTrial(p: BcpnnParams, seed: number, parts: TrialParts, options: RunOptions = {}): RunOutput {
  const shape = resolveShape(p);
  const { set, net } = parts;
  const recaller = new Recaller(net, set, p, shape);
  const noise = p.noise > 0 ? createRandom(seed, 'noise') : null;
  const active = new Int32Array(recaller.steps);
  const watch = p.stopWhenDecided ? new DecisionWatch(p.dt, p.minDwell) : null;
  const trace: TracePanel[] = [];
  const members = set.patterns.map((): { sequence: number; position: number }[] => []);
  set.ids.forEach((seq, sequence) => {
    seq.forEach((id, position) => {
      members[id]?.push({ sequence, position });
    });
  });
  const correctPrefix: number[] = [];
  const firstError: (number | null)[] = [];
  const dwell: number[] = [];
  let diverged = false;
  let recalled = 0;
  for (let s = 0; s < shape.K; s++) {
    const values = options.trace === true ? new Float64Array(recaller.steps * recaller.nPatterns) : null;
    const expected = set.ids[s] ?? [];
    watch?.reset(expected);
    // Only a later recall needs the noise stream where a full recall would have left it.
    const written = recaller.run(s, noise, active, values, watch, s < shape.K - 1);
    if (written === DIVERGED) diverged = true;
    const steps = written === DIVERGED ? recaller.steps : written;
    const score = scoreRecall(active.subarray(0, steps), expected, p.dt, p.minDwell);
    correctPrefix.push(score.correctPrefix);
    firstError.push(score.firstError);
    dwell.push(...score.dwellMs);
    if (score.firstError === null) recalled++;
    if (values !== null) {
      trace.push({
        title: `recall ${s} (sequence ${s})`,
        stepMs: p.dt,
        steps,
        seriesLabels: set.patterns.map((_, k) => `p${k}`),
        seriesMembers: members,
        markEndMs: shape.nCue * p.dt,
        values: steps === recaller.steps ? values : values.slice(0, steps * recaller.nPatterns),
      });
    }
  }
  const metrics = {
    success: !diverged && recalled === shape.K,
    recalledFraction: recalled / shape.K,
    meanCorrectPrefix: correctPrefix.reduce((x, y) => x + y, 0) / shape.K,
    meanDwellMs: dwell.length === 0 ? null : dwell.reduce((x, y) => x + y, 0) / dwell.length,
    achievedOverlap: achievedOverlap(set, shape.start, shape.k),
    diverged,
    distinctPatterns: set.patterns.length,
    correctPrefix,
    firstError,
  };
  return options.trace === true ? { metrics, trace } : { metrics };
}

export const bcpnnSequences: Model<typeof bcpnnParamsSchema> = {
  id: 'bcpnn-sequences',
  // 1.1.0 added stopWhenDecided, which enters every job key; with it off the metrics are those of 1.0.0.
  // 1.2.0: recall without noise updates one unit per class of each kind of hypercolumn (recall-layout.ts).
  // Matches differ from 1.1.0 in their last bits (sums of equal terms taken as products); metrics were
  // identical in every comparison (docs/model.md), but a tie at the threshold could in principle fall the
  // other way, so the version (and with it every job key) changes.
  version: '1.2.0',
  summary:
    'Modular attractor network (hypercolumns of minicolumns) trained with the BCPNN rule on K sequences with controlled overlap, then cued recall of each sequence; success when every sequence is replayed in order.',
  params: bcpnnParamsSchema,
  paramInfo,
  metricInfo,
  cost: estimateCost,
  run(params: BcpnnParams, seed: number, options: RunOptions = {}): RunOutput {
    const parts = trainTrial(params, seed);
    return recallTrial(params, seed, parts, options);
  },
};
