import type { Command } from 'commander';
import { action, EXIT_FAILURE, printError } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, modelTimeoutOption, useModelOptions } from '../model-options.js';
import { inspectJob } from '../summarize/inspect-job.js';

interface InspectFlags extends ModelCliOptions {
  readonly job: string;
  readonly file?: string;
  readonly json?: boolean;
}

export function registerInspect(program: Command): void {
  defineCommand(program, 'inspect')
    .requiredOption('--job <key>', 'job key, or a unique prefix of one')
    .option('--file <file.svg>', 'where to write the trace (default: DIR/report/inspect-<key>.svg)')
    .option('--json', 'print the outcome as one JSON object')
    .addOption(modelsOption())
    .addOption(modelTimeoutOption())
    .action(
      action(async (dir: string, flags: InspectFlags) => {
        await useModelOptions(flags);
        const result = await inspectJob({
          dir,
          job: flags.job,
          ...(flags.file === undefined ? {} : { out: flags.file }),
        });
        if (flags.json === true) process.stdout.write(`${JSON.stringify(result)}\n`);
        const lines = [
          `job ${result.key} (replicate ${result.replicate}, seed ${result.seed})`,
          `point: ${JSON.stringify(result.point)}`,
          `metrics: ${JSON.stringify(result.metrics)}`,
          result.stored === 'equal'
            ? 'stored record: identical metrics'
            : result.stored === 'none'
              ? 'stored record: none yet (the job has not finished in this sweep)'
              : `stored record: DIFFERENT metrics: ${JSON.stringify(result.storedMetrics)}`,
          result.svgPath === null
            ? `trace: this model records no trace, so nothing was drawn`
            : `trace: ${result.panels} recall panel(s) drawn to ${result.svgPath}`,
        ];
        if (flags.json !== true) process.stdout.write(`${lines.join('\n')}\n`);
        if (result.stored === 'different') {
          // A job is a pure function of its payload: a different result means the sweep cannot be reproduced.
          printError(
            `not reproducible: re-running job ${result.key} gave other metrics than its stored record ` +
              `(the model is not deterministic, or the record was produced by other code)`,
          );
          process.exitCode = EXIT_FAILURE;
        }
      }),
    );
}
