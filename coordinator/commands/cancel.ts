import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import { cancelSweep } from '../cancel.js';
import { action } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { addQueueOptions, type QueueCliOptions, queueSettings } from '../queue-session.js';

interface CancelOptions extends QueueCliOptions, ModelCliOptions {
  readonly json?: boolean;
}

export function registerCancel(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'cancel').option('--json', 'print the counts as one JSON object').addOption(modelsOption()),
  ).action(
    action(async (dir: string, options: CancelOptions) => {
      await useModelOptions(options);
      const settings = queueSettings(options);
      const logger = createLogger({ name: 'cancel' });
      const r = await cancelSweep(dir, settings, logger);
      if (options.json === true) {
        process.stdout.write(`${JSON.stringify(r)}\n`);
        return;
      }
      process.stdout.write(
        `sweep      ${r.name}\nremoved    ${r.removed} waiting job(s)\nrunning    ${r.active} job(s) will finish and keep their results\n`,
      );
    }),
  );
}
