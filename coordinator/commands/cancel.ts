import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerCancel(program: Command): void {
  program
    .command('cancel')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape cancel is not built yet');
    });
}
