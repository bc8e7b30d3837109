import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerInspect(program: Command): void {
  program
    .command('inspect')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape inspect is not built yet');
    });
}
