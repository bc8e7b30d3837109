import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerGather(program: Command): void {
  program
    .command('gather')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape gather is not built yet');
    });
}
