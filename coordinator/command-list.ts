import type { Command } from 'commander';
import type { CommandName } from './command-specs.js';

/** Adds one sub-command (its options and action) to the program. */
export type Register = (program: Command) => void;

/**
 * The module of every sub-command, loaded on demand (the queue commands alone
 * take most of a second to load). Summaries and arguments are in
 * `command-specs.ts`; a new command is one entry there and one here.
 */
export const COMMAND_LOADERS: Readonly<Record<CommandName, () => Promise<Register>>> = {
  demo: async () => (await import('./commands/demo.js')).registerDemo,
  simulate: async () => (await import('./commands/simulate.js')).registerSimulate,
  schema: async () => (await import('./commands/schema.js')).registerSchema,
  plan: async () => (await import('./commands/plan.js')).registerPlan,
  run: async () => (await import('./commands/run.js')).registerRun,
  submit: async () => (await import('./commands/submit.js')).registerSubmit,
  worker: async () => (await import('./commands/worker.js')).registerWorker,
  progress: async () => (await import('./commands/progress.js')).registerProgress,
  finish: async () => (await import('./commands/finish.js')).registerFinish,
  requeue: async () => (await import('./commands/requeue.js')).registerRequeue,
  gather: async () => (await import('./commands/gather.js')).registerGather,
  cancel: async () => (await import('./commands/cancel.js')).registerCancel,
  report: async () => (await import('./commands/report.js')).registerReport,
  inspect: async () => (await import('./commands/inspect.js')).registerInspect,
  sweeps: async () => (await import('./commands/sweeps.js')).registerSweeps,
};
