import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerReport(program: Command): void {
  program
    .command('report')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape report is not built yet');
    });
}
