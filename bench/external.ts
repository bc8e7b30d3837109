/**
 * Per-job overhead of external models: a model that does nothing, as a
 * program speaking the line protocol (Python and Node) and as a JavaScript
 * module, against the same model written as a built-in one (a Model object
 * with a zod schema, defined below). Each job is what a job runner
 * does with a model: check the parameters, run one trial, check the metrics.
 * The difference to the built-in model is the cost the external kind adds on
 * top of everything else a job costs (queue, threads, result files).
 * Goals: program under 0.5 ms per job, module under 0.05 ms.
 */
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { z } from 'zod';
import type { AnyModel, Model } from '../shared/model.js';
import { loadModelFolder } from '../shared/models/external/load-model-folder.js';

const JOBS = Number(process.env['RECALLSCAPE_BENCH_EXTERNAL_JOBS'] ?? '20000');

const noOpParams = z.object({ value: z.number().finite().default(0) }).strict();

/** The baseline: a model that does nothing, as a built-in model is written (no registry needed). */
const builtInNoOp: Model<typeof noOpParams> = {
  id: 'bench-no-op-built-in',
  version: '1',
  summary: 'Does nothing',
  params: noOpParams,
  paramInfo: { value: { unit: '1', description: 'Echoed back' } },
  cost: () => 1,
  run: (p) => ({ metrics: { success: true, value: p.value } }),
};

const PYTHON_NO_OP = `import json, sys
while True:
    line = sys.stdin.readline()
    if not line:
        break
    request = json.loads(line)
    sys.stdout.write(json.dumps({"key": request["key"], "metrics": {"done": True, "value": request["params"]["value"]}}) + "\\n")
    sys.stdout.flush()
`;

const NODE_NO_OP = `import { createInterface } from 'node:readline';
createInterface({ input: process.stdin }).on('line', (line) => {
  const { key, params } = JSON.parse(line);
  process.stdout.write(JSON.stringify({ key, metrics: { done: true, value: params.value } }) + '\\n');
});
`;

const MODULE_NO_OP = `export function run(params) {
  return { metrics: { done: true, value: params.value } };
}
`;

function description(kind: 'program' | 'module', extra: Record<string, unknown>): string {
  return JSON.stringify({
    id: `bench-no-op-${kind}`,
    version: '1',
    kind,
    ...extra,
    parameters: {
      type: 'object',
      properties: { value: { type: 'number', default: 0, description: 'Echoed back' } },
    },
    metrics: {
      done: { type: 'boolean', description: 'Always true' },
      value: { type: 'number', description: 'The value parameter' },
    },
    successMetric: 'done',
    timeoutMs: 10_000,
  });
}

async function folder(
  root: string,
  name: string,
  descriptionText: string,
  file: string,
  code: string,
): Promise<string> {
  const dir = join(root, name);
  await mkdir(dir);
  await writeFile(join(dir, 'recallscape-model.json'), descriptionText);
  await writeFile(join(dir, file), code);
  return dir;
}

/** Milliseconds per job over `jobs` jobs, after a warm-up of 200 (process start, JIT). */
async function perJob(model: AnyModel, jobs: number): Promise<number> {
  const runOne = async (i: number): Promise<void> => {
    const params = model.params.safeParse({ value: i });
    if (!params.success) throw new Error('bench parameters rejected');
    const output =
      model.runAsync === undefined
        ? model.run(params.data, i)
        : await model.runAsync(params.data, i, { key: `bench-${i}` });
    if (output.metrics.success !== true) throw new Error('bench job failed');
  };
  for (let i = 0; i < 200; i++) await runOne(i);
  const started = performance.now();
  for (let i = 0; i < jobs; i++) await runOne(i);
  return (performance.now() - started) / jobs;
}

export async function run(): Promise<void> {
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-external-'));
  const models: AnyModel[] = [];
  try {
    const python = await loadModelFolder(
      await folder(root, 'py', description('program', { command: ['python3', 'model.py'] }), 'model.py', PYTHON_NO_OP),
    );
    const node = await loadModelFolder(
      await folder(root, 'node', description('program', { command: ['node', 'model.mjs'] }), 'model.mjs', NODE_NO_OP),
    );
    const module = await loadModelFolder(
      await folder(root, 'module', description('module', { module: 'model.mjs' }), 'model.mjs', MODULE_NO_OP),
    );
    models.push(python, node, module);
    console.log(`${JOBS} jobs each, one after another, in one thread (set RECALLSCAPE_BENCH_EXTERNAL_JOBS to change)`);
    const builtIn = await perJob(builtInNoOp, JOBS);
    console.log(`built-in no-op model          ${(builtIn * 1000).toFixed(1).padStart(7)} us per job`);
    const rows: Array<[string, AnyModel, number]> = [
      ['module kind (goal < 0.05 ms)', module, 0.05],
      ['program, Node (goal < 0.5 ms)', node, 0.5],
      ['program, Python (goal < 0.5 ms)', python, 0.5],
    ];
    for (const [label, model, goal] of rows) {
      const ms = await perJob(model, JOBS);
      const extra = ms - builtIn;
      console.log(
        `${label.padEnd(30)}${(ms * 1000).toFixed(1).padStart(7)} us per job, ${(extra * 1000).toFixed(1).padStart(7)} us more than built-in: ${extra < goal ? 'meets' : 'MISSES'} the goal`,
      );
    }
  } finally {
    await Promise.all(models.map((m) => m.close?.()));
    await rm(root, { recursive: true, force: true });
  }
}
