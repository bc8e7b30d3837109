import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import { action } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { addQueueOptions, type QueueCliOptions, queueSettings } from '../queue-session.js';
import { requeueSweep } from '../requeue.js';

interface RequeueOptions extends QueueCliOptions, ModelCliOptions {
  readonly failed?: boolean;
  readonly json?: boolean;
}

export function registerRequeue(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'requeue')
      .option('--failed', 'also give jobs in the failed set a fresh set of attempts')
      .option('--json', 'print the counts as one JSON object')
      .addOption(modelsOption()),
  ).action(
    action(async (dir: string, options: RequeueOptions) => {
      await useModelOptions(options);
      const settings = queueSettings(options);
      const logger = createLogger({ name: 'requeue' });
      const r = await requeueSweep(dir, settings, options.failed === true, logger);
      if (options.json === true) {
        process.stdout.write(`${JSON.stringify(r)}\n`);
        return;
      }
      const lines = [
        `sweep      ${r.name}`,
        `planned    ${r.planned}`,
        `done       ${r.done} (results on disk)`,
        `in queue   ${r.inQueue} (left as they are)`,
      ];
      if (options.failed === true) lines.push(`retried    ${r.retried} failed job(s) with fresh attempts`);
      else if (r.failedKept > 0)
        lines.push(`failed     ${r.failedKept} left in the failed set (add --failed to retry them)`);
      lines.push(`added      ${r.enqueued}`);
      process.stdout.write(`${lines.join('\n')}\n`);
    }),
  );
}
