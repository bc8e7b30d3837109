import type { ExternalRunner } from './external-model.js';
import { ProgramClient, type ProgramSpec } from './program-client.js';

/**
 * Runs a program model: one process per runner, and every thread loads its
 * own models, so one process per worker thread, started at its first job.
 */
export function programRunner(spec: ProgramSpec, supervisor?: URL): ExternalRunner {
  const client = new ProgramClient(spec, supervisor);
  return {
    runAsync: (params, seed, options) =>
      client.run(
        { key: options.key, seed, params },
        { timeoutMs: options.timeoutMs, ...(options.trace === true ? { trace: true } : {}) },
      ),
    close: () => client.close(),
    processId: () => client.pid,
  };
}
