import { Option } from 'commander';
import { parseWholeNumber } from './cli-support.js';

/** `--models` and `--model-timeout` as commander hands them over. */
export interface ModelCliOptions {
  readonly models?: string;
  readonly modelTimeout?: string;
}

/** Environment variable naming the model folders (see shared/models/external/model-folders.ts). */
const MODELS_ENV = 'RECALLSCAPE_MODELS';
/** Same bound as a description's own timeoutMs: one week. */
const MAX_TIMEOUT_MS = 7 * 24 * 3600 * 1000;

/** `--models DIR`: every command that runs or validates models takes it. */
export function modelsOption(): Option {
  return new Option(
    '--models <dir>',
    `folder of model folders, each with a recallscape-model.json (default: $${MODELS_ENV})`,
  );
}

/**
 * `--model-timeout MS`. Where jobs run in a thread pool (run, worker) it is
 * the time limit of every job, over the sweep's jobTimeoutMs and the model's
 * own (shared/job-time-limit.ts); where one trial runs in the command's own
 * thread (simulate, inspect) only a model that runs outside it (an external
 * model) can be stopped, so there it limits those.
 */
export function modelTimeoutOption(where: 'pool' | 'here' = 'here'): Option {
  return new Option(
    '--model-timeout <ms>',
    where === 'pool'
      ? "time limit of one job, for every model (default: the sweep's jobTimeoutMs, else the model's own; see docs/sweep-file.md)"
      : "time limit of a trial of an external model (default: the model's timeoutMs)",
  );
}

/**
 * Register the external models of `--models` (or the environment variable)
 * in this process, so sweeps naming them validate and run, and the thread
 * pools started later load them too. The description machinery loads only
 * when there are folders to read. Throws InputError for a bad folder or
 * description.
 */
export async function useModelOptions(options: ModelCliOptions): Promise<void> {
  const timeout =
    options.modelTimeout === undefined
      ? undefined
      : parseWholeNumber('--model-timeout', options.modelTimeout, 1, MAX_TIMEOUT_MS);
  const given = options.models ?? process.env[MODELS_ENV] ?? '';
  if (given.trim() !== '') {
    const { registerModelsFromOption } = await import('../shared/models/external/model-folders.js');
    await registerModelsFromOption(options.models);
  }
  if (timeout !== undefined) {
    const { setModelTimeout } = await import('../shared/models/external/settings.js');
    setModelTimeout(timeout);
  }
}
