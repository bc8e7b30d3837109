import type { Command } from 'commander';
import { action } from '../cli-support.js';
import { inspectJob } from '../summarize/inspect-job.js';

interface InspectFlags {
  readonly job: string;
  readonly out?: string;
}

export function registerInspect(program: Command): void {
  program
    .command('inspect')
    .description('Re-run one job of a sweep deterministically, check it against its stored result, and draw its recall trace as SVG')
    .argument('<dir>', 'sweep folder (the one holding sweep.json)')
    .requiredOption('--job <key>', 'job key, or a unique prefix of one')
    .option('--out <file.svg>', 'where to write the trace (default: DIR/report/inspect-<key>.svg)')
    .action(
      action(async (dir: string, flags: InspectFlags) => {
        const result = await inspectJob({ dir, job: flags.job, ...(flags.out === undefined ? {} : { out: flags.out }) });
        if (result.stored === 'different') {
          process.stderr.write(
            `recallscape: warning: the re-run's metrics differ from the stored record of job ${result.key}; ` +
              `the model is not deterministic or the record was produced by other code\n` +
              `  stored: ${JSON.stringify(result.storedMetrics)}\n`,
          );
        }
        const lines = [
          `job ${result.key} (replicate ${result.replicate}, seed ${result.seed})`,
          `point: ${JSON.stringify(result.point)}`,
          `metrics: ${JSON.stringify(result.metrics)}`,
          result.stored === 'equal'
            ? 'stored record: identical metrics'
            : result.stored === 'none'
              ? 'stored record: none yet (the job has not finished in this sweep)'
              : 'stored record: DIFFERENT metrics (see warning)',
          result.svgPath === null
            ? `trace: this model records no trace, so nothing was drawn`
            : `trace: ${result.panels} recall panel(s) drawn to ${result.svgPath}`,
        ];
        process.stdout.write(`${lines.join('\n')}\n`);
      }),
    );
}
