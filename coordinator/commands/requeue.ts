import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerRequeue(program: Command): void {
  program
    .command('requeue')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape requeue is not built yet');
    });
}
