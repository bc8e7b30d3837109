import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerSubmit(program: Command): void {
  program
    .command('submit')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape submit is not built yet');
    });
}
