import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerDemo(program: Command): void {
  program
    .command('demo')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape demo is not built yet');
    });
}
