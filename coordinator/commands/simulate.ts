import { readFile } from 'node:fs/promises';
import type { Command } from 'commander';
import { writeFileAtomic } from '../../shared/atomic-write.js';
import { type FieldIssue, InputError, invalidInput, issuesFromZod } from '../../shared/errors.js';
import type { TracePanel } from '../../shared/model.js';
import { DEFAULT_MODEL_ID, requireModel } from '../../shared/models/registry.js';
import { isParamName, unknownParamIssue } from '../../shared/param-names.js';
import { MAX_SEED } from '../../shared/random.js';
import { runModelAsync } from '../../worker/run-model.js';
import { action, repeatable } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, modelTimeoutOption, useModelOptions } from '../model-options.js';

interface SimulateOptions extends ModelCliOptions {
  readonly model: string;
  readonly params?: string;
  readonly set?: string[];
  readonly seed: string;
  readonly trace?: string;
}

function inputError(path: string, message: string): InputError {
  return new InputError(`${path}: ${message}`, [{ path, message }]);
}

/** `name=value`: JSON numbers and booleans become values, anything else a string; the model schema decides. */
export function parseAssignment(text: string): [string, unknown] {
  const at = text.indexOf('=');
  const name = at < 0 ? '' : text.slice(0, at).trim();
  if (at < 0 || name === '') throw inputError('--set', `expected name=value, got "${text}"`);
  const raw = text.slice(at + 1).trim();
  let value: unknown = raw;
  try {
    const parsed: unknown = JSON.parse(raw);
    if (typeof parsed === 'number' || typeof parsed === 'boolean') value = parsed;
  } catch {
    // Not JSON: keep the string.
  }
  return [name, value];
}

async function readParamsFile(path: string): Promise<Record<string, unknown>> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (error) {
    throw inputError('--params', `cannot read ${path}: ${error instanceof Error ? error.message : String(error)}`);
  }
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (error) {
    throw inputError(
      '--params',
      `${path} is not valid JSON: ${error instanceof Error ? error.message : String(error)}`,
    );
  }
  if (parsed === null || typeof parsed !== 'object' || Array.isArray(parsed)) {
    throw inputError('--params', `${path} must hold one JSON object of parameter names and values`);
  }
  return parsed as Record<string, unknown>;
}

function parseSeed(text: string): number {
  const seed = /^\d+$/.test(text.trim()) ? Number(text.trim()) : Number.NaN;
  if (!Number.isSafeInteger(seed) || seed < 0 || seed > MAX_SEED) {
    throw inputError('--seed', `must be an integer from 0 to ${MAX_SEED}, got "${text}"`);
  }
  return seed;
}

/** CSV `recall,t_ms,p0,...` with every number at full float64 precision. */
export function traceCsv(panels: readonly TracePanel[]): string {
  const labels = panels[0]?.seriesLabels ?? [];
  const lines: string[] = [['recall', 't_ms', ...labels].join(',')];
  panels.forEach((panel, recall) => {
    const width = panel.seriesLabels.length;
    for (let t = 0; t < panel.steps; t++) {
      const row: string[] = [String(recall), String(t * panel.stepMs)];
      for (let k = 0; k < width; k++) row.push(String(panel.values[t * width + k]));
      lines.push(row.join(','));
    }
  });
  return `${lines.join('\n')}\n`;
}

/** Write through the shared atomic helper (no half file, no temp file left); a failure is the user's --trace. */
async function writeAtomically(path: string, text: string): Promise<void> {
  try {
    await writeFileAtomic(path, text, { createFolder: false });
  } catch (error) {
    throw inputError('--trace', `cannot write ${path}: ${error instanceof Error ? error.message : String(error)}`);
  }
}

export function registerSimulate(program: Command): void {
  defineCommand(program, 'simulate')
    .option('--model <id>', 'model to run', DEFAULT_MODEL_ID)
    .option('--params <file>', 'JSON object of parameters (explicit "sequences" go here)')
    .option('--set <name=value>', 'set one parameter (repeatable; applied after --params)', repeatable)
    .option('--seed <n>', 'seed of the trial (non-negative integer)', '1')
    .option('--trace <file>', 'write the match of every stored pattern at every recall step as CSV')
    .addOption(modelsOption())
    .addOption(modelTimeoutOption())
    .action(
      action(async (options: SimulateOptions) => {
        await useModelOptions(options);
        const model = requireModel(options.model, '--model');
        const seed = parseSeed(options.seed);
        const fromFile = options.params === undefined ? {} : await readParamsFile(options.params);
        // Names are checked against the model before any value is stored, and
        // stored as own properties: `__proto__`, `constructor` and the like
        // are unknown parameters, never a change of the object's prototype.
        const raw: Record<string, unknown> = Object.create(null) as Record<string, unknown>;
        const unknown: FieldIssue[] = [];
        const put = (where: string, name: string, value: unknown): void => {
          if (!isParamName(model, name)) unknown.push(unknownParamIssue(where, name, model));
          else Object.defineProperty(raw, name, { value, enumerable: true, writable: true, configurable: true });
        };
        for (const name of Object.keys(fromFile)) put(`--params ${name}`, name, fromFile[name]);
        for (const assignment of options.set ?? []) {
          const [name, value] = parseAssignment(assignment);
          put(`--set ${name}`, name, value);
        }
        if (unknown.length > 0) throw invalidInput(`invalid parameters for model ${model.id}`, unknown);
        const parsed = model.params.safeParse({ ...raw });
        if (!parsed.success) {
          throw invalidInput(`invalid parameters for model ${model.id}`, issuesFromZod(parsed.error.issues));
        }
        const { output } = await runModelAsync(model, parsed.data, seed, {
          key: 'simulate',
          ...(options.trace === undefined ? {} : { trace: true }),
        });
        if (options.trace !== undefined) {
          if (output.trace === undefined || output.trace.length === 0) {
            throw inputError('--trace', `model ${model.id} records no trace`);
          }
          await writeAtomically(options.trace, traceCsv(output.trace));
        }
        process.stdout.write(`${JSON.stringify(output.metrics)}\n`);
      }),
    );
}
