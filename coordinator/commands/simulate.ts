import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerSimulate(program: Command): void {
  program
    .command('simulate')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape simulate is not built yet');
    });
}
