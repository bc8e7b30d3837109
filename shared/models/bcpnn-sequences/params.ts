import { z } from 'zod';
import type { ParamInfo } from '../../model.js';

/**
 * Parameters of the bcpnn-sequences model (see docs/model.md). Every rule's
 * message names the field and what is allowed, because these messages reach
 * people through the CLI and the sweep planner.
 */

/** Sanity caps: a hostile or mistyped payload must not allocate gigabytes. */
export const LIMITS = {
  maxUnits: 20_000,
  maxPatterns: 256,
  maxSequenceCount: 64,
  maxSequenceLength: 256,
  maxRecallStepsPerRecall: 1_000_000,
  maxRecallUnitSteps: 2e10,
  maxTrainingSteps: 1e10,
  maxTime: 1e9,
  /** Units sharing patterns form classes; the class weight matrix is classes^2 doubles. */
  maxUnitClasses: 5000,
} as const;

const DEFAULT_HYPERCOLUMNS = 10;
const DEFAULT_SEQUENCE_COUNT = 2;
const DEFAULT_SEQUENCE_LENGTH = 6;

/**
 * Default first overlapped position: floor((L - k)/2). The generator needs
 * start >= 1 (copying into the cues could make them equal), so for generated
 * sequences a default of 0 stays an error. With explicit sequences the window
 * only picks the positions `achievedOverlap` compares (their cues are checked
 * to differ), so the default is raised to 1 there: every explicit set,
 * including L = 2, is accepted without setting overlapStart.
 */
export function defaultOverlapStart(L: number, k: number, explicitSequences: boolean): number {
  const start = Math.floor((L - k) / 2);
  return explicitSequences ? Math.max(1, start) : start;
}

interface NumberRule {
  readonly int?: boolean;
  readonly min: number;
  /** true: value must be > min. */
  readonly minExclusive?: boolean;
  readonly max: number;
}

function allowedText(field: string, rule: NumberRule): string {
  const kind = rule.int === true ? 'an integer' : 'a finite number';
  const lower = rule.minExclusive === true ? `> ${rule.min}` : `>= ${rule.min}`;
  return `${field} must be ${kind} ${lower} and <= ${rule.max}`;
}

function num(field: string, rule: NumberRule) {
  const message = allowedText(field, rule);
  let schema = z.number({ error: message });
  if (rule.int === true) schema = schema.int({ error: message });
  schema =
    rule.minExclusive === true ? schema.gt(rule.min, { error: message }) : schema.gte(rule.min, { error: message });
  return schema.lte(rule.max, { error: message });
}

const T = LIMITS.maxTime;
const time = (field: string, min = 0) => num(field, { min, max: T });
const tau = (field: string) => num(field, { min: 0, minExclusive: true, max: T });
const gainRule = (field: string) => num(field, { min: 0, max: 1e12 });

const sequencesMessage =
  'sequences must be a list of sequences, each a list of patterns, each a list of one non-negative integer (minicolumn) per hypercolumn';
const minicolumnIndex = z
  .number({ error: sequencesMessage })
  .int({ error: sequencesMessage })
  .gte(0, { error: sequencesMessage })
  .lte(LIMITS.maxUnits, { error: sequencesMessage });

const shape = {
  hypercolumns: num('hypercolumns', { int: true, min: 1, max: LIMITS.maxUnits })
    .optional()
    .describe('Number of hypercolumns H (default 10, or taken from sequences)'),
  minicolumns: num('minicolumns', { int: true, min: 2, max: LIMITS.maxUnits })
    .default(20)
    .describe('Minicolumns per hypercolumn M'),
  sequenceCount: num('sequenceCount', { int: true, min: 1, max: LIMITS.maxSequenceCount })
    .optional()
    .describe('Number of stored sequences K (default 2, or taken from sequences)'),
  sequenceLength: num('sequenceLength', { int: true, min: 2, max: LIMITS.maxSequenceLength })
    .optional()
    .describe('Patterns per sequence L (default 6, or taken from sequences)'),
  patternOverlap: num('patternOverlap', { min: 0, max: 1 })
    .default(0)
    .describe('Fraction f of hypercolumns copied from sequence 1 at overlapped positions'),
  overlapLength: num('overlapLength', { int: true, min: 0, max: LIMITS.maxSequenceLength })
    .default(1)
    .describe('Number k of consecutive overlapped positions'),
  overlapStart: num('overlapStart', { int: true, min: 1, max: LIMITS.maxSequenceLength })
    .optional()
    .describe('First overlapped position (default floor((L-k)/2), at least 1 with explicit sequences)'),
  sequences: z
    .array(z.array(z.array(minicolumnIndex, { error: sequencesMessage }), { error: sequencesMessage }), {
      error: sequencesMessage,
    })
    .optional()
    .describe('Explicit sequences [[[H ints] x L] x K]; replaces the generator'),
  dt: num('dt', { min: 0, minExclusive: true, max: 1000 }).default(1).describe('Time step'),
  tauZPre: tau('tauZPre').default(50).describe('Presynaptic z-trace time constant'),
  tauZPost: tau('tauZPost').default(5).describe('Postsynaptic z-trace time constant'),
  tauP: tau('tauP').default(5000).describe('Probability trace time constant'),
  eps: num('eps', { min: 1e-12, max: 1 }).default(0.01).describe('Regulariser of the probability estimates'),
  epochs: num('epochs', { int: true, min: 1, max: 100_000 }).default(3).describe('Training passes over all sequences'),
  patternDuration: tau('patternDuration').default(100).describe('Clamp time of each pattern during training'),
  gapDuration: time('gapDuration').default(0).describe('Silent time after each pattern during training'),
  restDuration: time('restDuration').default(200).describe('Silent time after each sequence during training'),
  tauSupport: tau('tauSupport').default(10).describe('Support (membrane) time constant'),
  tauAdapt: tau('tauAdapt').default(150).describe('Adaptation time constant'),
  adaptGain: gainRule('adaptGain').default(2).describe('Strength of adaptation'),
  gain: gainRule('gain').default(1).describe('Softmax gain'),
  weightGain: gainRule('weightGain').default(1).describe('Multiplier of the recurrent input w o'),
  biasGain: gainRule('biasGain').default(1).describe('Multiplier of the bias beta'),
  cueDuration: time('cueDuration').default(50).describe('Cue time at the start of each recall'),
  cueStrength: gainRule('cueStrength').default(20).describe('Input to the cue pattern units'),
  recallDuration: time('recallDuration').default(1000).describe('Free recall time after the cue'),
  noise: gainRule('noise').default(0).describe('Standard deviation of the input noise per unit per step'),
  matchThreshold: num('matchThreshold', { min: 0, max: 1 })
    .default(0.5)
    .describe('Least match for a pattern to count as active'),
  minDwell: time('minDwell').default(5).describe('Runs shorter than this are dropped in scoring'),
  stopWhenDecided: z
    .boolean({ error: 'stopWhenDecided must be true or false' })
    .default(false)
    .describe('End each recall as soon as its outcome is decided (shortens the last dwell, not the outcome)'),
};

const TIME_CONSTANTS = ['tauZPre', 'tauZPost', 'tauP', 'tauSupport', 'tauAdapt'] as const;

const NAMES = Object.keys(shape).join(', ');

export const bcpnnParamsSchema = z
  .strictObject(shape, {
    error: (issue) =>
      issue.code === 'unrecognized_keys'
        ? `unknown parameter${issue.keys.length > 1 ? 's' : ''} ${issue.keys.map((k) => `"${k}"`).join(', ')}; the parameters are: ${NAMES}`
        : undefined,
  })
  .superRefine(
    (p, ctx) => {
      const issue = (path: string, message: string): void => {
        ctx.addIssue({ code: 'custom', path: [path], message });
      };
      for (const name of TIME_CONSTANTS) {
        if (p[name] < p.dt) issue(name, `${name} must be >= dt (${p.dt} ms), got ${p[name]}`);
      }
      if (Math.round(p.patternDuration / p.dt) < 1) {
        issue(
          'patternDuration',
          `patternDuration must be at least one step: round(patternDuration/dt) >= 1 (dt = ${p.dt})`,
        );
      }
      const nRecall = Math.round(p.cueDuration / p.dt) + Math.round(p.recallDuration / p.dt);
      if (nRecall < 1) issue('recallDuration', 'cueDuration + recallDuration must give at least one recall step');
      if (nRecall > LIMITS.maxRecallStepsPerRecall) {
        issue(
          'recallDuration',
          `(cueDuration + recallDuration)/dt must be <= ${LIMITS.maxRecallStepsPerRecall} steps, got ${nRecall}`,
        );
      }

      // Shape: explicit sequences fix K, L and H; given values must agree.
      let K = p.sequenceCount ?? DEFAULT_SEQUENCE_COUNT;
      let L = p.sequenceLength ?? DEFAULT_SEQUENCE_LENGTH;
      let H = p.hypercolumns ?? DEFAULT_HYPERCOLUMNS;
      if (p.sequences !== undefined) {
        const seqs = p.sequences;
        const first = seqs[0];
        const firstPattern = first?.[0];
        if (first === undefined || firstPattern === undefined) {
          issue('sequences', 'sequences must hold at least one sequence of at least two patterns');
          return;
        }
        K = seqs.length;
        L = first.length;
        H = firstPattern.length;
        if (L < 2) issue('sequences', 'every sequence must have at least 2 patterns');
        if (H < 1) issue('sequences', 'every pattern must have at least one hypercolumn');
        if (K > LIMITS.maxSequenceCount) issue('sequences', `at most ${LIMITS.maxSequenceCount} sequences are allowed`);
        for (let s = 0; s < K; s++) {
          const seq = seqs[s] ?? [];
          if (seq.length !== L)
            issue(
              'sequences',
              `sequence ${s} has ${seq.length} patterns; all sequences must have ${L} (as sequence 0)`,
            );
          for (let q = 0; q < seq.length; q++) {
            const pat = seq[q] ?? [];
            if (pat.length !== H)
              issue(
                'sequences',
                `pattern ${q} of sequence ${s} has ${pat.length} entries; every pattern needs ${H} (one per hypercolumn)`,
              );
            for (const m of pat) {
              if (m >= p.minicolumns)
                issue(
                  'sequences',
                  `pattern ${q} of sequence ${s} uses minicolumn ${m}; minicolumns are 0..${p.minicolumns - 1}`,
                );
            }
          }
        }
        for (let s = 1; s < K; s++) {
          for (let r = 0; r < s; r++) {
            if (JSON.stringify(seqs[s]?.[0]) === JSON.stringify(seqs[r]?.[0])) {
              issue('sequences', `sequences ${r} and ${s} start with the same pattern; the cue patterns must differ`);
            }
          }
        }
        if (p.sequenceCount !== undefined && p.sequenceCount !== K)
          issue(
            'sequenceCount',
            `sequenceCount (${p.sequenceCount}) must equal the number of given sequences (${K}) or be left out`,
          );
        if (p.sequenceLength !== undefined && p.sequenceLength !== L)
          issue(
            'sequenceLength',
            `sequenceLength (${p.sequenceLength}) must equal the length of the given sequences (${L}) or be left out`,
          );
        if (p.hypercolumns !== undefined && p.hypercolumns !== H)
          issue(
            'hypercolumns',
            `hypercolumns (${p.hypercolumns}) must equal the pattern size of the given sequences (${H}) or be left out`,
          );
      } else if (H * Math.log(p.minicolumns) < Math.log(K) - 1e-12) {
        issue(
          'sequenceCount',
          `sequenceCount ${K} needs at least ${K} distinct cue patterns but minicolumns^hypercolumns = ${p.minicolumns ** H}`,
        );
      }
      // Bound on the number of unit classes (docs/performance.md): small unless patterns share units at random.
      const N0 = H * p.minicolumns;
      let classBound = p.minicolumns >= K * L ? 0 : N0;
      if (p.sequences !== undefined) {
        const used = new Set<number>();
        for (const seq of p.sequences)
          for (const pat of seq)
            pat.forEach((m, h) => {
              used.add(h * p.minicolumns + m);
            });
        classBound = used.size + 1;
      }
      if (classBound > LIMITS.maxUnitClasses) {
        issue(
          'minicolumns',
          p.sequences !== undefined
            ? `the given sequences use ${classBound - 1} distinct units; at most ${LIMITS.maxUnitClasses - 1} are allowed`
            : `when minicolumns < sequenceCount x sequenceLength, patterns share units and hypercolumns x minicolumns must be <= ${LIMITS.maxUnitClasses}, got ${N0}`,
        );
      }
      if (K * L > LIMITS.maxPatterns)
        issue('sequenceLength', `sequenceCount x sequenceLength must be <= ${LIMITS.maxPatterns}, got ${K * L}`);
      const N = H * p.minicolumns;
      if (N > LIMITS.maxUnits)
        issue('minicolumns', `hypercolumns x minicolumns must be <= ${LIMITS.maxUnits} units, got ${N}`);
      if (K * nRecall * N > LIMITS.maxRecallUnitSteps) {
        issue(
          'recallDuration',
          `sequenceCount x recall steps x units must be <= ${LIMITS.maxRecallUnitSteps}, got ${K * nRecall * N}`,
        );
      }
      const perSequence =
        L * (Math.round(p.patternDuration / p.dt) + Math.round(p.gapDuration / p.dt)) +
        Math.round(p.restDuration / p.dt);
      if (p.epochs * K * perSequence > LIMITS.maxTrainingSteps) {
        issue(
          'epochs',
          `epochs x training steps must be <= ${LIMITS.maxTrainingSteps}, got ${p.epochs * K * perSequence}`,
        );
      }

      // Overlap window: start >= 1 keeps the cues apart; start + k <= L.
      const k = p.overlapLength;
      const start = p.overlapStart ?? defaultOverlapStart(L, k, p.sequences !== undefined);
      if (k > L - 1) {
        issue(
          'overlapLength',
          `overlapLength must be <= sequenceLength - 1 (${L - 1}) so that the cues differ, got ${k}`,
        );
      } else if (start < 1) {
        issue(
          'overlapStart',
          `the default overlapStart floor((L - k)/2) = ${start} for sequenceLength ${L} and overlapLength ${k}; it must be >= 1 so that the cues differ: set overlapStart to 1`,
        );
      } else if (start + k > L) {
        issue('overlapStart', `overlapStart + overlapLength must be <= sequenceLength (${L}), got ${start} + ${k}`);
      }
    },
    { when: (payload) => payload.issues.length === 0 },
  )
  // Fill the shape so that resolved parameters (job keys, records) show it.
  // A copy whose keys are then assigned, not `{ ...p, key: value }`: V8
  // builds that literal about six times slower when the keys already exist,
  // and every sweep point and every job passes through here.
  .overwrite((p) => {
    const seqs = p.sequences;
    const out = Object.assign({}, p);
    out.sequenceCount = seqs !== undefined ? seqs.length : (p.sequenceCount ?? DEFAULT_SEQUENCE_COUNT);
    out.sequenceLength = seqs !== undefined ? (seqs[0]?.length ?? 0) : (p.sequenceLength ?? DEFAULT_SEQUENCE_LENGTH);
    out.hypercolumns = seqs !== undefined ? (seqs[0]?.[0]?.length ?? 0) : (p.hypercolumns ?? DEFAULT_HYPERCOLUMNS);
    return out;
  });

export type BcpnnParams = z.output<typeof bcpnnParamsSchema>;

/** Integer quantities derived from the parameters, used by every stage. */
export interface ResolvedShape {
  readonly H: number;
  readonly M: number;
  readonly N: number;
  readonly K: number;
  readonly L: number;
  /** Overlapped positions: [start, start + k). */
  readonly k: number;
  readonly start: number;
  readonly nPattern: number;
  readonly nGap: number;
  readonly nRest: number;
  readonly nCue: number;
  readonly nFree: number;
}

export function resolveShape(p: BcpnnParams): ResolvedShape {
  const K = p.sequences?.length ?? p.sequenceCount ?? DEFAULT_SEQUENCE_COUNT;
  const L = p.sequences?.[0]?.length ?? p.sequenceLength ?? DEFAULT_SEQUENCE_LENGTH;
  const H = p.sequences?.[0]?.[0]?.length ?? p.hypercolumns ?? DEFAULT_HYPERCOLUMNS;
  const M = p.minicolumns;
  const k = p.overlapLength;
  return {
    H,
    M,
    N: H * M,
    K,
    L,
    k,
    start: p.overlapStart ?? defaultOverlapStart(L, k, p.sequences !== undefined),
    nPattern: Math.round(p.patternDuration / p.dt),
    nGap: Math.round(p.gapDuration / p.dt),
    nRest: Math.round(p.restDuration / p.dt),
    nCue: Math.round(p.cueDuration / p.dt),
    nFree: Math.round(p.recallDuration / p.dt),
  };
}

export const paramInfo: Readonly<Record<keyof typeof shape, ParamInfo>> = {
  hypercolumns: {
    unit: 'hypercolumns',
    description: 'Number of hypercolumns H (modules with one winner each); default 10',
  },
  minicolumns: { unit: 'minicolumns per hypercolumn', description: 'Minicolumns (units) per hypercolumn M' },
  sequenceCount: { unit: 'sequences', description: 'Number of stored sequences K; default 2' },
  sequenceLength: { unit: 'patterns', description: 'Patterns per sequence L; default 6' },
  patternOverlap: {
    unit: 'fraction of hypercolumns',
    description: 'Fraction of hypercolumns an overlapped pattern shares with sequence 1',
  },
  overlapLength: { unit: 'positions', description: 'Number of consecutive overlapped positions k' },
  overlapStart: {
    unit: 'position',
    description:
      'First overlapped position (0 is the cue); default floor((L-k)/2), raised to 1 with explicit sequences',
  },
  sequences: {
    unit: 'minicolumn index',
    description: 'Explicit patterns [[[H ints] x L] x K], replacing the overlap generator',
  },
  dt: { unit: 'ms', description: 'Time step of training and recall' },
  tauZPre: { unit: 'ms', description: 'Time constant of the presynaptic z-traces' },
  tauZPost: { unit: 'ms', description: 'Time constant of the postsynaptic z-traces' },
  tauP: { unit: 'ms', description: 'Time constant of the probability traces' },
  eps: { unit: '1', description: 'Regulariser added to probability estimates before the logarithm' },
  epochs: { unit: 'passes', description: 'Training passes over all sequences' },
  patternDuration: { unit: 'ms', description: 'Time each pattern is clamped during training' },
  gapDuration: { unit: 'ms', description: 'Silent time after each pattern during training' },
  restDuration: { unit: 'ms', description: 'Silent time after each sequence during training' },
  tauSupport: { unit: 'ms', description: 'Time constant of the support (input integration)' },
  tauAdapt: { unit: 'ms', description: 'Time constant of adaptation' },
  adaptGain: { unit: '1', description: 'Strength of adaptation in the support input' },
  gain: { unit: '1', description: 'Softmax gain inside each hypercolumn' },
  weightGain: { unit: '1', description: 'Multiplier of the recurrent input w o' },
  biasGain: { unit: '1', description: 'Multiplier of the bias beta' },
  cueDuration: { unit: 'ms', description: 'Time the first pattern is cued at the start of each recall' },
  cueStrength: { unit: '1', description: 'Extra input to the cued units' },
  recallDuration: { unit: 'ms', description: 'Free recall time after the cue' },
  noise: { unit: '1', description: 'Standard deviation of Gaussian input noise per unit per step' },
  matchThreshold: {
    unit: 'fraction of hypercolumns',
    description: 'Least pattern match that counts as an active pattern',
  },
  minDwell: { unit: 'ms', description: 'Decoded runs shorter than this are dropped before scoring' },
  stopWhenDecided: {
    unit: '1',
    description: 'End each recall at its first wrong pattern or once its last pattern lasted minDwell',
  },
};
