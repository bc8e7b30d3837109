import { Command, type CommanderError } from 'commander';
import { CODE_VERSION } from '../shared/version.js';
import { EXIT_FAILURE, EXIT_INPUT } from './cli-support.js';

type Register = (program: Command) => void;

/**
 * Sub-commands are loaded on demand: the queue commands pull in BullMQ and
 * ioredis, the report commands the renderers, and a plain `run` or
 * `simulate` should not pay for them at every start.
 */
const COMMANDS: Readonly<Record<string, () => Promise<Register>>> = {
  demo: async () => (await import('./commands/demo.js')).registerDemo,
  simulate: async () => (await import('./commands/simulate.js')).registerSimulate,
  schema: async () => (await import('./commands/schema.js')).registerSchema,
  plan: async () => (await import('./commands/plan.js')).registerPlan,
  run: async () => (await import('./commands/run.js')).registerRun,
  submit: async () => (await import('./commands/submit.js')).registerSubmit,
  worker: async () => (await import('./commands/worker.js')).registerWorker,
  progress: async () => (await import('./commands/progress.js')).registerProgress,
  requeue: async () => (await import('./commands/requeue.js')).registerRequeue,
  gather: async () => (await import('./commands/gather.js')).registerGather,
  cancel: async () => (await import('./commands/cancel.js')).registerCancel,
  report: async () => (await import('./commands/report.js')).registerReport,
  inspect: async () => (await import('./commands/inspect.js')).registerInspect,
};

// Output that cannot be written (a closed pipe, a full disk) ends the command
// with one line instead of an unhandled 'error' event and a stack trace.
process.stdout.on('error', (error: NodeJS.ErrnoException) => {
  if (error.code === 'EPIPE') process.exit(0);
  process.stderr.write(`recallscape: cannot write the output: ${error.message}\n`);
  process.exit(EXIT_FAILURE);
});

const program = new Command()
  .name('recallscape')
  .description(
    'Parameter sweeps of attractor-network memory simulations: plan, run (here or on many machines through Redis), resume, and report phase diagrams of recall success.',
  )
  .version(CODE_VERSION)
  .showHelpAfterError('(run with --help for usage)')
  // Usage mistakes (unknown option, missing argument) are input errors: exit 2.
  .exitOverride((err: CommanderError) => {
    if (err.code === 'commander.helpDisplayed' || err.code === 'commander.version' || err.code === 'commander.help') {
      process.exit(0);
    }
    process.exit(EXIT_INPUT);
  });

// The first word that is not an option names the sub-command; anything else
// (help, a typo, no command) loads them all so help and errors list them.
const first = process.argv.slice(2).find((arg) => !arg.startsWith('-'));
const wanted = first !== undefined && Object.hasOwn(COMMANDS, first) ? [first] : Object.keys(COMMANDS);
for (const name of wanted) {
  const load = COMMANDS[name];
  if (load !== undefined) (await load())(program);
}

await program.parseAsync(process.argv);
