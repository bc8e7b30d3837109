import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerProgress(program: Command): void {
  program
    .command('progress')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape progress is not built yet');
    });
}
