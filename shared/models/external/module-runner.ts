import { pathToFileURL } from 'node:url';
import { ModelFailure } from '../../errors.js';
import type { RunOptions, RunOutput } from '../../model.js';
import type { ModuleDescription } from './description-schema.js';
import type { ExternalRunner } from './external-model.js';
import { checkMetrics, type MetricDeclaration } from './metric-check.js';

/** What a module model exports (named exports, or the same fields on its default export). */
interface ModelModule {
  readonly id?: unknown;
  readonly version?: unknown;
  run(params: Record<string, unknown>, seed: number, options: RunOptions): unknown;
  cost?(params: Record<string, unknown>): unknown;
}

/** A module that does not export the contract: the description's `module` field is wrong. */
export class ModuleContractProblem extends Error {
  override readonly name = 'ModuleContractProblem';
}

function contractOf(exports: Record<string, unknown>, description: ModuleDescription): ModelModule {
  const fromDefault = exports['default'];
  const source =
    typeof exports['run'] === 'function'
      ? exports
      : fromDefault !== null && typeof fromDefault === 'object'
        ? (fromDefault as Record<string, unknown>)
        : exports;
  if (typeof source['run'] !== 'function') {
    throw new ModuleContractProblem(
      'exports no run(params, seed) function (as a named export or on the default export)',
    );
  }
  if (source['cost'] !== undefined && typeof source['cost'] !== 'function') {
    throw new ModuleContractProblem('exports a cost that is not a function');
  }
  for (const field of ['id', 'version'] as const) {
    if (source[field] !== undefined && source[field] !== description[field]) {
      throw new ModuleContractProblem(
        `exports ${field} ${JSON.stringify(source[field])}, but the description says ${JSON.stringify(description[field])}`,
      );
    }
  }
  return source as unknown as ModelModule;
}

/** Import the module by file URL; throws ModuleContractProblem when it cannot be used. */
export async function importModelModule(file: string, description: ModuleDescription): Promise<ModelModule> {
  let exports: Record<string, unknown>;
  try {
    exports = (await import(pathToFileURL(file).href)) as Record<string, unknown>;
  } catch (error) {
    const why = error instanceof Error ? `${error.name}: ${error.message}` : String(error);
    throw new ModuleContractProblem(`cannot be imported: ${why.split('\n')[0]}`);
  }
  return contractOf(exports, description);
}

function isPromise(value: unknown): value is Promise<unknown> {
  return value !== null && typeof value === 'object' && typeof (value as { then?: unknown }).then === 'function';
}

function fail(id: string, kind: ModelFailure['kind'], reason: string, retryable: boolean): ModelFailure {
  return new ModelFailure(kind, `model ${id}: ${reason}`, retryable);
}

function outputOf(id: string, declared: MetricDeclaration, value: unknown): RunOutput {
  const metrics = (value as { metrics?: unknown } | null)?.metrics;
  if (metrics === undefined) {
    throw fail(id, 'exception', 'run() must return { metrics: {...} }', false);
  }
  const checked = checkMetrics(declared, metrics);
  if (!checked.ok) throw fail(id, 'exception', `wrong metrics: ${checked.problem}`, false);
  const trace = (value as { trace?: unknown }).trace;
  return Array.isArray(trace) ? { metrics: checked.metrics, trace } : { metrics: checked.metrics };
}

function thrown(id: string, error: unknown): ModelFailure {
  if (error instanceof ModelFailure) return error;
  const why = error instanceof Error ? `${error.name}: ${error.message}` : String(error);
  return fail(id, 'exception', `run() threw ${why}`, true);
}

/**
 * Runs a module model in the calling thread. A synchronous run() cannot be
 * interrupted here (the thread pool's own limit applies); an asynchronous
 * one is given up after the time limit.
 */
export function moduleRunner(id: string, declared: MetricDeclaration, module: ModelModule): ExternalRunner {
  return {
    runSync(params, seed, options) {
      let value: unknown;
      try {
        value = module.run(params, seed, options);
      } catch (error) {
        throw thrown(id, error);
      }
      if (isPromise(value)) {
        value.catch(() => undefined);
        throw fail(id, 'exception', 'run() returned a promise: call runAsync for this model', false);
      }
      return outputOf(id, declared, value);
    },
    async runAsync(params, seed, options) {
      let value: unknown;
      try {
        value = module.run(params, seed, options.trace === undefined ? {} : { trace: options.trace });
      } catch (error) {
        throw thrown(id, error);
      }
      if (!isPromise(value)) return outputOf(id, declared, value);
      let timer: NodeJS.Timeout | undefined;
      const timeout = new Promise<never>((_, reject) => {
        timer = setTimeout(
          () => reject(fail(id, 'timeout', `no result within the time limit of ${options.timeoutMs} ms`, false)),
          options.timeoutMs,
        );
      });
      try {
        return outputOf(id, declared, await Promise.race([value, timeout]));
      } catch (error) {
        throw thrown(id, error);
      } finally {
        clearTimeout(timer);
      }
    },
    cost(params) {
      if (module.cost === undefined) return 1;
      const value = Number(module.cost(params));
      return Number.isFinite(value) && value >= 0 ? value : 1;
    },
    close: async () => undefined,
  };
}
