import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerRun(program: Command): void {
  program
    .command('run')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape run is not built yet');
    });
}
