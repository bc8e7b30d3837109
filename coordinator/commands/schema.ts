import type { Command } from 'commander';

// Placeholder until the command is built; it refuses to pretend.
export function registerSchema(program: Command): void {
  program
    .command('schema')
    .description('(not built yet)')
    .action(() => {
      throw new Error('recallscape schema is not built yet');
    });
}
