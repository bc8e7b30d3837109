import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import { action } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { gatherSweep } from '../gather.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { addQueueOptions, type QueueCliOptions, queueSettings } from '../queue-session.js';

interface GatherOptions extends QueueCliOptions, ModelCliOptions {
  readonly json?: boolean;
}

export function registerGather(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'gather').option('--json', 'print the counts as one JSON object').addOption(modelsOption()),
  ).action(
    action(async (dir: string, options: GatherOptions) => {
      await useModelOptions(options);
      const settings = queueSettings(options);
      const logger = createLogger({ name: 'gather' });
      const r = await gatherSweep(dir, settings, logger);
      if (options.json === true) {
        process.stdout.write(`${JSON.stringify(r)}\n`);
        return;
      }
      const lines = [
        `sweep      ${r.name}`,
        `found      ${r.found} finished trial(s) in Redis`,
        `copied     ${r.copied} record(s)${r.writer === null ? '' : ` into results/${r.writer}.ndjson`}`,
        `on disk    ${r.alreadyOnDisk} already there`,
        `freed      ${r.removed} queue job(s) removed from Redis (a job carries a batch of trials)`,
      ];
      if (r.rejected > 0)
        lines.push(`rejected   ${r.rejected} return value(s) that are not records of this sweep (left in Redis)`);
      process.stdout.write(`${lines.join('\n')}\n`);
    }),
  );
}
