/**
 * Section "validation": CPU time and peak memory of `recallscape plan FILE
 * --calibrate 0` (the real command line, one child process per file) on the
 * worst sweep files: numbers far over their caps, sizes right at them,
 * deep nesting, huge files, hostile YAML. Each child reports its own
 * process.resourceUsage() when it exits (user + system CPU, kernel maxRSS),
 * so start-up is included: a file is accepted or refused within these
 * figures, all of it. Goal (issue 9): under 1 s of CPU and 200 MB per file.
 * A line for the empty sweep shows what start-up alone costs.
 */
import { spawn } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { planSweep } from '../coordinator/plan-sweep.js';
import { loadSweepFile } from '../shared/sweep/load.js';

const CLI = fileURLToPath(new URL('../../bin/recallscape.js', import.meta.url));
const GOAL_CPU_MS = 1000;
const GOAL_MB = 200;

interface Case {
  readonly title: string;
  readonly file: string;
  readonly text: () => string;
  readonly extra?: readonly string[];
}

const range = (n: number, f: (i: number) => string): string => Array.from({ length: n }, (_, i) => f(i)).join(', ');
const nest = (depth: number): string => `${'['.repeat(depth)}1${']'.repeat(depth)}`;

export const CASES: readonly Case[] = [
  { title: 'empty sweep (start-up alone)', file: 'empty.yaml', text: () => 'name: s\n' },
  {
    title: 'steps: 1e6 (over the cap)',
    file: 'steps-1e6.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e6 } }\n',
  },
  {
    title: 'steps: 1e12',
    file: 'steps-1e12.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e12 } }\n',
  },
  {
    title: 'steps: 2e5',
    file: 'steps-2e5.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 2e5 } }\n',
  },
  {
    title: 'steps: 1e5 (the most allowed), accepted',
    file: 'steps-1e5.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e5 } }\n',
  },
  {
    title: 'steps: 1e5 closer than 12 digits (every value compared)',
    file: 'steps-close.yaml',
    // Neighbours 1e-12 apart relative to the values, as 1 to 1.0000001 in 100,000 steps.
    text: () => 'name: s\nvary: { tauZPre: { from: 100, to: 100.00001, steps: 100000 } }\n',
  },
  {
    title: 'grid of 5,000,000 points (the most allowed), --yes, accepted',
    file: 'grid-5e6.yaml',
    text: () =>
      'name: s\nvary:\n  patternOverlap: { from: 0, to: 1, steps: 100000 }\n  tauZPre: { from: 10, to: 200, steps: 50 }\n',
    extra: ['--yes'],
  },
  {
    title: 'grid of 5,000,000 points, over the job limit',
    file: 'grid-5e6-limit.yaml',
    text: () =>
      'name: s\nvary:\n  patternOverlap: { from: 0, to: 1, steps: 100000 }\n  tauZPre: { from: 10, to: 200, steps: 50 }\n',
  },
  {
    title: 'grid of 100^10 points',
    file: 'grid-1e20.yaml',
    text: () =>
      `name: s\nvary:\n${[
        'tauZPre',
        'tauZPost',
        'tauP',
        'tauSupport',
        'tauAdapt',
        'adaptGain',
        'gain',
        'weightGain',
        'biasGain',
        'cueStrength',
      ]
        .map((p) => `  ${p}: { from: 10, to: 200, steps: 100 }`)
        .join('\n')}\n`,
  },
  {
    title: 'replicates: 1e300',
    file: 'replicates.yaml',
    text: () => 'name: s\nreplicates: 1e300\n',
  },
  {
    title: 'sobol, 500,000 points x 2 continuous ranges, accepted',
    file: 'sobol-1e6.yaml',
    text: () =>
      'name: s\nsampler: { kind: sobol, points: 500000 }\nvary:\n  patternOverlap: { between: [0, 1] }\n  tauZPre: { between: [10, 200] }\n',
  },
  {
    title: 'random, 500,000 points x 2 discrete ranges (the most drawn values), accepted',
    file: 'random-discrete.yaml',
    text: () =>
      `name: s\nsampler: { kind: random, points: 500000 }\nvary:\n  patternOverlap: { among: [${range(1000, (i) => String(i / 1000))}] }\n  tauZPre: { between: [10, 100000], integer: true }\n`,
  },
  {
    title: 'lhs, 250,000 points x 4 discrete ranges (the most drawn values), accepted',
    file: 'lhs-discrete.yaml',
    text: () =>
      'name: s\nsampler: { kind: lhs, points: 250000 }\nvary:\n  tauZPre: { between: [10, 1000], integer: true }\n  tauZPost: { between: [10, 1000], integer: true }\n  overlapLength: { among: [1, 2, 3] }\n  patternOverlap: { among: [0, 0.5, 1] }\n',
  },
  {
    title: 'sobol with 41 varied parameters',
    file: 'sobol-41.json',
    text: () =>
      JSON.stringify({
        name: 's',
        sampler: { kind: 'sobol', points: 8 },
        vary: Object.fromEntries(Array.from({ length: 41 }, (_, i) => [`p${i}`, { between: [0, 1] }])),
      }),
  },
  {
    title: 'JSON nested 3,000 deep inside fixed',
    file: 'deep-3000.json',
    text: () => `{"name": "s", "fixed": {"sequences": ${nest(3000)}}}`,
  },
  {
    title: 'JSON nested 500,000 deep',
    file: 'deep-5e5.json',
    text: () => `{"name": "s", "fixed": {"sequences": ${nest(500_000)}}}`,
  },
  {
    title: 'YAML nested 3,000 deep',
    file: 'deep-3000.yaml',
    text: () => `name: s\nfixed: { sequences: ${nest(3000)} }\n`,
  },
  {
    title: 'NaN and Infinity in fixed (YAML)',
    file: 'nan.yaml',
    text: () => 'name: s\nfixed: { noise: .nan, gain: .inf, biasGain: 1e400 }\n',
  },
  {
    title: 'JSON list of 100,000 grid values (2 MB file), accepted',
    file: 'list-1e5.json',
    text: () => `{"name": "s", "vary": {"tauZPre": {"list": [${range(100_000, (i) => String(10 + i / 1000))}]}}}`,
  },
  {
    title: 'JSON list of 300,000 values',
    file: 'list-3e5.json',
    text: () => `{"name": "s", "vary": {"tauZPre": {"list": [${range(300_000, (i) => String(i % 10))}]}}}`,
  },
  {
    title: 'JSON of more than 200,000 values in small lists',
    file: 'values.json',
    text: () => `{"name": "s", "fixed": {"sequences": [${range(1000, () => `[${range(450, () => '1')}]`)}]}}`,
  },
  {
    title: 'YAML list of 4,500 values near the YAML size limit, accepted',
    file: 'yaml-list.yaml',
    text: () => `name: s\nvary: { tauZPre: { list: [${range(4_500, (i) => String(i + 1))}] } }\n`,
  },
  {
    title: 'YAML of 3,000 keys (duplicate check is one lookup per key)',
    file: 'yaml-keys.yaml',
    text: () => `name: s\nfixed:\n${range(3_000, (i) => `  k${i}: 1`).replaceAll(', ', '\n')}\n`,
  },
  {
    title: 'YAML alias expansion',
    file: 'yaml-aliases.yaml',
    text: () => {
      let text = 'name: s\na0: &a0 [x, x, x, x, x, x, x, x, x, x]\n';
      for (let i = 1; i < 10; i++) text += `a${i}: &a${i} [${range(10, () => `*a${i - 1}`)}]\n`;
      return text;
    },
  },
  {
    title: 'file of 50 MB',
    file: 'big.json',
    text: () => `{"name": "s", "fixed": {"x": "${'y'.repeat(50 * 1024 * 1024)}"}}`,
  },
  {
    title: 'explicit sequences of 16 x 16 x 750 in fixed (192,000 values), 4 grid points, accepted',
    file: 'sequences.json',
    text: () =>
      JSON.stringify({
        name: 's',
        fixed: {
          minicolumns: 20,
          sequences: Array.from({ length: 16 }, (_, s) =>
            Array.from({ length: 16 }, (_, q) =>
              Array.from({ length: 750 }, (_, h) => ((s >> (h % 4)) & 1) + 2 * (q % 2)),
            ),
          ),
        },
        vary: { tauZPre: { list: [20, 40, 60, 80] } },
      }),
  },
];

/** CPU of loading and planning the file in this process (modules already loaded), in ms. */
async function inProcess(file: string, extra: readonly string[]): Promise<number> {
  const started = process.cpuUsage();
  try {
    const sweep = await loadSweepFile(file, extra.includes('--yes') ? {} : { jobLimit: 1_000_000 });
    await planSweep(sweep, { calibrate: 0 });
  } catch {
    // Refused: the time to refuse is the figure.
  }
  const used = process.cpuUsage(started);
  return (used.user + used.system) / 1000;
}

interface Figures {
  readonly code: number | null;
  readonly cpuMs: number;
  readonly maxRssMB: number;
  readonly firstLine: string;
}

/** Run the CLI in a child that reports its own resource use on exit through fd 3. */
function measure(file: string, extra: readonly string[]): Promise<Figures> {
  const wrapper = `
    import { writeSync } from 'node:fs';
    process.on('exit', () => {
      const r = process.resourceUsage();
      writeSync(3, JSON.stringify({ cpu: (r.userCPUTime + r.systemCPUTime) / 1000, rss: r.maxRSS / 1024 }));
    });
    process.argv = [process.argv[0], ${JSON.stringify(CLI)}, 'plan', ${JSON.stringify(file)}, '--calibrate', '0', ...${JSON.stringify(extra)}];
    await import(${JSON.stringify(CLI)});
  `;
  const child = spawn(process.execPath, ['--input-type=module', '-e', wrapper], {
    stdio: ['ignore', 'pipe', 'pipe', 'pipe'],
    env: { ...process.env, RECALLSCAPE_DEBUG: '' },
  });
  let out = '';
  let err = '';
  let usage = '';
  child.stdout?.on('data', (d: Buffer) => (out += d.toString()));
  child.stderr?.on('data', (d: Buffer) => (err += d.toString()));
  (child.stdio[3] as NodeJS.ReadableStream).on('data', (d: Buffer) => (usage += d.toString()));
  return new Promise((resolve, reject) => {
    child.on('error', reject);
    child.on('close', (code) => {
      const parsed = JSON.parse(usage || '{"cpu":NaN,"rss":NaN}') as { cpu: number; rss: number };
      const text = (code === 0 ? out : err).replace(/^recallscape: /, '');
      const lines = text.split('\n').filter((l) => l.trim() !== '');
      const detail = code === 0 ? (lines.find((l) => l.startsWith('points')) ?? '') : (lines[1] ?? lines[0] ?? '');
      resolve({ code, cpuMs: parsed.cpu, maxRssMB: parsed.rss, firstLine: detail.trim().slice(0, 90) });
    });
  });
}

export async function run(): Promise<void> {
  const dir = await mkdtemp(join(tmpdir(), 'rs-bench-validation-'));
  try {
    console.log(
      'plan FILE --calibrate 0, one process per file: CPU (user + system) and peak RSS of the whole process,',
    );
    console.log(
      'start-up included; load+plan: CPU of loading and planning the same file in this process, start-up excluded',
    );
    console.log(
      `${'case'.padEnd(74)} ${'exit'.padStart(4)} ${'CPU ms'.padStart(7)} ${'peak MB'.padStart(8)} ${'load+plan'.padStart(9)}  first line`,
    );
    // Warm up the in-process path once (module-level work, the first zod parse).
    const warm = join(dir, 'warm.yaml');
    await writeFile(warm, 'name: w\nvary: { patternOverlap: { list: [0, 1] } }\n');
    await inProcess(warm, []);
    let worstCpu = 0;
    let worstMb = 0;
    for (const c of CASES) {
      const file = join(dir, c.file);
      await writeFile(file, c.text());
      const f = await measure(file, c.extra ?? []);
      const own = await inProcess(file, c.extra ?? []);
      worstCpu = Math.max(worstCpu, f.cpuMs);
      worstMb = Math.max(worstMb, f.maxRssMB);
      console.log(
        `${c.title.padEnd(74)} ${String(f.code).padStart(4)} ${f.cpuMs.toFixed(0).padStart(7)} ${f.maxRssMB.toFixed(0).padStart(8)} ${own.toFixed(0).padStart(9)}  ${f.firstLine}`,
      );
      await rm(file, { force: true });
    }
    console.log(
      `worst: ${worstCpu.toFixed(0)} ms CPU (goal < ${GOAL_CPU_MS}), ${worstMb.toFixed(0)} MB peak (goal < ${GOAL_MB})`,
    );
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
