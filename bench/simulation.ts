/**
 * Section "simulation": what one bcpnn-sequences trial costs.
 *
 * 1. The two primitives of the recall loop, before and after: exp (Math.exp
 *    against the table-driven exp) and the normal draw (one uniform() call per
 *    draw through the library generator, against the fill that keeps the
 *    generator state in locals), in ns per call, rounds interleaved.
 * 2. Whole trials at (10,20), old recall (bench/simulation-baseline.ts) and
 *    current recall alternating on the same seeds in this process: CPU ratio,
 *    and a check that every metric is identical.
 * 3. CPU time per trial at four sizes (the two larger with weightGain = 10/H
 *    so that they recall), with the success rate.
 * 4. stopWhenDecided off and on.
 * 5. Recall without noise through one representative per class of each kind
 *    of hypercolumn, against the per-unit loop (the unit layout) on the same
 *    trained networks: CPU ratio, and whether the active pattern of every
 *    step is the same.
 *
 * CPU time is this process's (process.cpuUsage: user + system), so waiting
 * for a core on a shared machine is not counted; wall time is shown beside it.
 * The kernel charges CPU time by clock ticks (a few ms), so one 10 ms trial
 * can read anywhere from 5 to 15 ms: CPU time is read over blocks of at
 * least about 50 ms (several trials, or many calls), and the figure shown is
 * the median over blocks, which a busy neighbour's occasional burst (one
 * block several times slower, seen on the shared machine) does not move.
 */
import { cpus, loadavg } from 'node:os';
import { expNonPositive } from '../shared/fast-exp.js';
import { bcpnnSequences, recallTrial, trainTrial } from '../shared/models/bcpnn-sequences/index.js';
import { fillNormal } from '../shared/models/bcpnn-sequences/normal-noise.js';
import { type BcpnnParams, resolveShape } from '../shared/models/bcpnn-sequences/params.js';
import { Recaller } from '../shared/models/bcpnn-sequences/recall.js';
import { type RecallLayout, sharedLayout, unitLayout } from '../shared/models/bcpnn-sequences/recall-layout.js';
import { createRandom } from '../shared/random.js';
import { baselineFillNormal, baselineRecallTrial, libraryUniform } from './simulation-baseline.js';

const median = (xs: readonly number[]): number => {
  const sorted = [...xs].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  return sorted.length % 2 === 1
    ? (sorted[mid] as number)
    : ((sorted[mid - 1] as number) + (sorted[mid] as number)) / 2;
};
const sum = (xs: readonly number[]): number => xs.reduce((a, b) => a + b, 0);

/** CPU milliseconds of this process spent in f. */
function cpuMs(f: () => void): number {
  const start = process.cpuUsage();
  f();
  const d = process.cpuUsage(start);
  return (d.user + d.system) / 1000;
}

const params = (input: Record<string, unknown>): BcpnnParams => bcpnnSequences.params.parse(input);

// ---- 1. primitives -------------------------------------------------------

/** Arguments as the softmax sees them: gain*s - max, mostly a few units below 0. */
const EXP_ARGS = (() => {
  const rng = createRandom(1, 'bench-exp');
  const xs = new Float64Array(4096);
  for (let i = 0; i < xs.length; i++) xs[i] = -40 * rng.uniform();
  return xs;
})();
const EXP_REPS = 3000;

// Two loops, each with one callee, so that each is compiled for its own function.
function loopMathExp(): number {
  let acc = 0;
  for (let r = 0; r < EXP_REPS; r++) for (let i = 0; i < EXP_ARGS.length; i++) acc += Math.exp(EXP_ARGS[i] as number);
  return acc;
}
function loopTableExp(): number {
  let acc = 0;
  for (let r = 0; r < EXP_REPS; r++)
    for (let i = 0; i < EXP_ARGS.length; i++) acc += expNonPositive(EXP_ARGS[i] as number);
  return acc;
}

const DRAW_BLOCK = 200;
const DRAW_BLOCKS = 40_000;

function primitives(): void {
  const rounds = 7;
  const calls = EXP_REPS * EXP_ARGS.length;
  let sink = loopMathExp() + loopTableExp();
  const oldExp: number[] = [];
  const newExp: number[] = [];
  for (let r = 0; r < rounds; r++) {
    oldExp.push((cpuMs(() => (sink += loopMathExp())) * 1e6) / calls);
    newExp.push((cpuMs(() => (sink += loopTableExp())) * 1e6) / calls);
  }

  // Normal draws in blocks of 200 (one recall step at (10,20)).
  const block = new Float64Array(DRAW_BLOCK);
  const oldUniform = libraryUniform(11, 'bench-normal');
  const newSource = createRandom(11, 'bench-normal');
  for (let i = 0; i < 500; i++) {
    baselineFillNormal(oldUniform, block, 1);
    fillNormal(newSource, block, 1);
  }
  const oldDraw: number[] = [];
  const newDraw: number[] = [];
  const draws = DRAW_BLOCK * DRAW_BLOCKS;
  for (let r = 0; r < rounds; r++) {
    oldDraw.push(
      (cpuMs(() => {
        for (let i = 0; i < DRAW_BLOCKS; i++) baselineFillNormal(oldUniform, block, 1);
      }) *
        1e6) /
        draws,
    );
    newDraw.push(
      (cpuMs(() => {
        for (let i = 0; i < DRAW_BLOCKS; i++) fillNormal(newSource, block, 1);
      }) *
        1e6) /
        draws,
    );
  }
  // Same stream, same numbers: both sources were fed the same seed and drew the same count.
  const checkOld = new Float64Array(100_000);
  const checkNew = new Float64Array(100_000);
  let differing = 0;
  for (let i = 0; i < 10; i++) {
    baselineFillNormal(oldUniform, checkOld, 1);
    fillNormal(newSource, checkNew, 1);
    for (let n = 0; n < checkOld.length; n++) if (checkOld[n] !== checkNew[n]) differing++;
  }
  if (sink === 0) console.log('');
  const line = (name: string, oldNs: number[], newNs: number[], oldName: string, newName: string, extra = '') => {
    const o = median(oldNs);
    const n = median(newNs);
    console.log(
      `  ${name.padEnd(28)} ${oldName} ${o.toFixed(2)} ns   ${newName} ${n.toFixed(2)} ns   new/old ${(n / o).toFixed(2)}${extra}`,
    );
  };
  console.log(`primitives, ns per call, median of ${rounds} interleaved rounds of about 0.1 s each:`);
  line('exp, x uniform in [-40, 0]', oldExp, newExp, 'Math.exp', 'table-driven');
  line(
    'normal draw (ziggurat)',
    oldDraw,
    newDraw,
    'uniform() per draw',
    'state in locals',
    `   same numbers: ${differing === 0 ? 'yes' : `NO (${differing} differ)`} on 1,000,000 draws`,
  );
}

// ---- 2. old and new trial side by side ------------------------------------

function sideBySide(): void {
  const p = params({ noise: 0.5 });
  const blocks = 16;
  const perBlock = 5;
  for (let i = 0; i < 10; i++) {
    const parts = trainTrial(p, 5000 + i);
    baselineRecallTrial(p, 5000 + i, parts);
    recallTrial(p, 5000 + i, parts);
  }
  const oldCpu: number[] = [];
  const newCpu: number[] = [];
  let identical = 0;
  const oldMetrics: string[] = [];
  const newMetrics: string[] = [];
  for (let b = 0; b < blocks; b++) {
    const seeds = Array.from({ length: perBlock }, (_, i) => b * perBlock + i);
    const runOld = () =>
      oldCpu.push(
        cpuMs(() => {
          for (const seed of seeds)
            oldMetrics[seed] = JSON.stringify(baselineRecallTrial(p, seed, trainTrial(p, seed)));
        }),
      );
    const runNew = () =>
      newCpu.push(
        cpuMs(() => {
          for (const seed of seeds)
            newMetrics[seed] = JSON.stringify(recallTrial(p, seed, trainTrial(p, seed)).metrics);
        }),
      );
    // Alternate which goes first, so that drift in the machine's load favours neither.
    if (b % 2 === 0) {
      runOld();
      runNew();
    } else {
      runNew();
      runOld();
    }
  }
  const trials = blocks * perBlock;
  for (let seed = 0; seed < trials; seed++) if (oldMetrics[seed] === newMetrics[seed]) identical++;
  const ratios = oldCpu.map((o, i) => (newCpu[i] as number) / o);
  console.log(
    `\nwhole trial at (10,20), noise 0.5, old and new recall alternating in blocks of ${perBlock} on the same ${trials} seeds (training included in both):`,
  );
  console.log(
    `  cpu ms per trial (median of blocks): old ${(median(oldCpu) / perBlock).toFixed(2)}, new ${(median(newCpu) / perBlock).toFixed(2)}; new/old ${median(ratios).toFixed(3)} (median of block pairs; ${(sum(newCpu) / sum(oldCpu)).toFixed(3)} from totals)`,
  );
  console.log(`  metrics identical on ${identical} of ${trials} trials`);

  // Metrics only, over more configurations: noise levels, overlaps, a larger network.
  let checked = 0;
  let same = 0;
  const configs: Record<string, unknown>[] = [];
  for (const noise of [0, 0.3, 1])
    for (const patternOverlap of [0, 0.6, 0.8, 1]) configs.push({ noise, patternOverlap, overlapLength: 2 });
  configs.push({
    hypercolumns: 6,
    minicolumns: 8,
    sequenceCount: 3,
    sequenceLength: 5,
    patternOverlap: 0.5,
    noise: 0.5,
  });
  configs.push({ hypercolumns: 16, minicolumns: 50, weightGain: 10 / 16, noise: 0.5 });
  for (const input of configs) {
    const q = params(input);
    for (let seed = 1; seed <= ((q.hypercolumns ?? 10) > 10 ? 2 : 6); seed++) {
      const parts = trainTrial(q, seed);
      const a = JSON.stringify(baselineRecallTrial(q, seed, parts));
      const b = JSON.stringify(recallTrial(q, seed, parts).metrics);
      checked++;
      if (a === b) same++;
    }
  }
  console.log(
    `  metrics identical on ${same} of ${checked} more trials over ${configs.length} configurations (noise 0 to 1, overlap 0 to 1, three sizes)`,
  );
}

// ---- 3. sizes ---------------------------------------------------------------

interface Size {
  readonly H: number;
  readonly M: number;
  readonly warmup: number;
  readonly trials: number;
  /** Stop measuring after this much wall time (ms), keeping the section short. */
  readonly budgetMs: number;
  /** Trials per CPU reading (a block should take at least about 50 ms). */
  readonly block: number;
  readonly goalCpuMs?: number;
}

const SIZES: readonly Size[] = [
  { H: 10, M: 20, warmup: 20, trials: 60, block: 5, budgetMs: 8_000, goalCpuMs: 10 },
  { H: 16, M: 50, warmup: 3, trials: 20, block: 2, budgetMs: 10_000 },
  { H: 25, M: 100, warmup: 2, trials: 9, block: 1, budgetMs: 15_000 },
  { H: 50, M: 100, warmup: 1, trials: 6, block: 1, budgetMs: 15_000 },
];

/**
 * CPU per trial at four sizes. With noise every unit is updated; without,
 * recall updates one unit per class of each kind of hypercolumn
 * (recall-layout.ts), so noise-free trials are timed too.
 */
function sizes(noise: number): void {
  console.log(
    `\nL=6, K=2, defaults, noise ${noise}; weightGain 10/H above H = 10 so that the larger networks recall; medians (cpu over blocks of trials)`,
  );
  console.log(
    'size (H,M)   N      weightGain  trials  success  train ms  recall ms  wall ms  cpu ms  cpu us/step     goal',
  );
  let peakHeap = 0;
  for (const size of SIZES) {
    const weightGain = size.H > 10 ? 10 / size.H : 1;
    const p = params({ hypercolumns: size.H, minicolumns: size.M, noise, weightGain });
    const shape = resolveShape(p);
    const recallSteps = shape.K * (shape.nCue + shape.nFree);
    for (let i = 0; i < size.warmup; i++) bcpnnSequences.run(p, 1000 + i);
    const train: number[] = [];
    const recall: number[] = [];
    const wall: number[] = [];
    let successes = 0;
    const blockCpu: number[] = [];
    const started = performance.now();
    for (let i = 0; i < size.trials && (i < 3 || performance.now() - started < size.budgetMs); i += size.block) {
      const cpu0 = process.cpuUsage();
      for (let j = i; j < i + size.block; j++) {
        const t0 = performance.now();
        const parts = trainTrial(p, j);
        const t1 = performance.now();
        const out = recallTrial(p, j, parts);
        const t2 = performance.now();
        train.push(t1 - t0);
        recall.push(t2 - t1);
        wall.push(t2 - t0);
        if (out.metrics.success) successes++;
      }
      const d = process.cpuUsage(cpu0);
      blockCpu.push((d.user + d.system) / 1000 / size.block);
      peakHeap = Math.max(peakHeap, process.memoryUsage().heapUsed);
    }
    const cpuPerTrial = median(blockCpu);
    const goal =
      size.goalCpuMs === undefined
        ? ''
        : `< ${size.goalCpuMs} ms cpu: ${cpuPerTrial < size.goalCpuMs ? 'met' : 'NOT met'}`;
    console.log(
      [
        `(${size.H},${size.M})`.padEnd(12),
        String(shape.N).padEnd(6),
        weightGain.toFixed(3).padEnd(11),
        String(wall.length).padEnd(7),
        `${successes}/${wall.length}`.padEnd(8),
        median(train).toFixed(2).padStart(8),
        median(recall).toFixed(2).padStart(10),
        median(wall).toFixed(2).padStart(8),
        cpuPerTrial.toFixed(2).padStart(7),
        (((cpuPerTrial - median(train)) * 1000) / recallSteps).toFixed(2).padStart(15),
        ` ${goal}`,
      ].join(' '),
    );
  }
  const usage = process.resourceUsage();
  console.log(
    `peak memory: RSS ${(usage.maxRSS / 1024).toFixed(1)} MiB (whole process), heap used ${(peakHeap / 2 ** 20).toFixed(1)} MiB`,
  );
}

// ---- 4. stopWhenDecided ---------------------------------------------------

function earlyStop(): void {
  const blocks = 8;
  const perBlock = 5;
  const trials = blocks * perBlock;
  console.log(
    `\nstopWhenDecided at (10,20), noise 0.5: cpu ms per trial (median of blocks), off and on alternating in blocks of ${perBlock} on the same ${trials} seeds`,
  );
  for (const [label, input] of [
    ['patternOverlap 0 (recalled)', {}],
    ['patternOverlap 0.8, overlapLength 2 (fails)', { patternOverlap: 0.8, overlapLength: 2 }],
  ] as const) {
    const off = params({ noise: 0.5, ...input });
    const on = params({ noise: 0.5, ...input, stopWhenDecided: true });
    for (let i = 0; i < 5; i++) {
      bcpnnSequences.run(off, 900 + i);
      bcpnnSequences.run(on, 900 + i);
    }
    const offCpu: number[] = [];
    const onCpu: number[] = [];
    const offMetrics: Record<string, unknown>[] = [];
    const onMetrics: Record<string, unknown>[] = [];
    for (let b = 0; b < blocks; b++) {
      const seeds = Array.from({ length: perBlock }, (_, i) => b * perBlock + i);
      offCpu.push(
        cpuMs(() => {
          for (const seed of seeds) offMetrics[seed] = bcpnnSequences.run(off, seed).metrics;
        }),
      );
      onCpu.push(
        cpuMs(() => {
          for (const seed of seeds) onMetrics[seed] = bcpnnSequences.run(on, seed).metrics;
        }),
      );
    }
    let successes = 0;
    let sameOutcome = 0;
    for (let seed = 0; seed < trials; seed++) {
      const a = offMetrics[seed] ?? {};
      const b = onMetrics[seed] ?? {};
      if (a['success'] === true) successes++;
      if (a['success'] === b['success'] && JSON.stringify(a['correctPrefix']) === JSON.stringify(b['correctPrefix']))
        sameOutcome++;
    }
    console.log(
      `  ${label.padEnd(44)} off ${(median(offCpu) / perBlock).toFixed(2)}  on ${(median(onCpu) / perBlock).toFixed(2)}  on/off ${median(onCpu.map((x, i) => x / (offCpu[i] as number))).toFixed(2)}   success ${successes}/${trials}, same outcome ${sameOutcome}/${trials}`,
    );
  }
}

// ---- 5. representatives --------------------------------------------------

function representatives(): void {
  const shapes: { label: string; input: Record<string, unknown>; trials: number }[] = [
    {
      label: '(4,4), 1 sequence of 3',
      input: { hypercolumns: 4, minicolumns: 4, sequenceLength: 3, sequenceCount: 1 },
      trials: 200,
    },
    { label: '(10,20)', input: {}, trials: 100 },
    { label: '(10,20), patternOverlap 0.5', input: { patternOverlap: 0.5 }, trials: 100 },
    {
      label: '(16,50), weightGain 10/16',
      input: { hypercolumns: 16, minicolumns: 50, weightGain: 10 / 16 },
      trials: 30,
    },
    {
      label: '(25,100), weightGain 10/25',
      input: { hypercolumns: 25, minicolumns: 100, weightGain: 10 / 25 },
      trials: 10,
    },
  ];
  console.log(
    '\nrecall without noise: per-unit loop against one representative per class of each kind of hypercolumn, same networks, alternating by trial',
  );
  for (const { label, input, trials } of shapes) {
    const p = params(input);
    const shape = resolveShape(p);
    let unitCpu = 0;
    let sharedCpu = 0;
    let same = 0;
    let reps = 0;
    for (let seed = 0; seed < trials; seed++) {
      const { set, net } = trainTrial(p, seed);
      const recallWith = (layout: RecallLayout): { cpu: number; active: Int32Array[] } => {
        const active: Int32Array[] = [];
        const cpu = cpuMs(() => {
          const recaller = new Recaller(net, set, p, shape, layout);
          for (let k = 0; k < shape.K; k++) {
            const a = new Int32Array(recaller.steps);
            recaller.run(k, null, a, null);
            active.push(a);
          }
        });
        return { cpu, active };
      };
      const shared = sharedLayout(net, set, shape);
      reps += shared.size;
      const a = recallWith(unitLayout(net, set, shape));
      const b = recallWith(shared);
      unitCpu += a.cpu;
      sharedCpu += b.cpu;
      if (a.active.every((x, k) => x.every((id, t) => id === b.active[k]?.[t]))) same++;
    }
    console.log(
      `  ${label.padEnd(30)} N ${String(shape.N).padStart(5)}  representatives ${(reps / trials).toFixed(1).padStart(6)}  ` +
        `cpu ms per trial ${(unitCpu / trials).toFixed(3)} -> ${(sharedCpu / trials).toFixed(3)} (${(unitCpu / sharedCpu).toFixed(1)}x)  ` +
        `same active pattern at every step ${same}/${trials}`,
    );
  }
}

export async function run(): Promise<void> {
  const load = () => loadavg()[0]?.toFixed(1) ?? '?';
  console.log(
    `bcpnn-sequences, one thread; cpu = user + system time of this process; load average ${load()} on ${cpus().length} cores at the start`,
  );
  primitives();
  sideBySide();
  sizes(0.5);
  sizes(0);
  earlyStop();
  representatives();
  console.log(
    `(load average ${load()} at the end; wall-clock figures include waiting for a core, cpu figures do not, but a busy machine slows every operation: shared caches and cores)`,
  );
}
