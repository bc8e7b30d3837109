import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerWorker(program: Command): void {
  program
    .command('worker')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape worker is not built yet');
    });
}
