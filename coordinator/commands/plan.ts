import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerPlan(program: Command): void {
  program
    .command('plan')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape plan is not built yet');
    });
}
