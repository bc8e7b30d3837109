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
  finish: async () => (await import('./commands/finish.js')).registerFinish,
  requeue: async () => (await import('./commands/requeue.js')).registerRequeue,
  gather: async () => (await import('./commands/gather.js')).registerGather,
  cancel: async () => (await import('./commands/cancel.js')).registerCancel,
  report: async () => (await import('./commands/report.js')).registerReport,
  inspect: async () => (await import('./commands/inspect.js')).registerInspect,
  sweeps: async () => (await import('./commands/sweeps.js')).registerSweeps,
};

/**
 * The top-level help and usage errors list every command from this table, so
 * they load no command module (the queue commands alone take most of a
 * second to load). Each line must match the command's own `.argument()` and
 * `.description()`; test/cli/startup.test.ts checks that.
 */
const SUMMARIES: Readonly<Record<keyof typeof COMMANDS, readonly [args: string, summary: string]>> = {
  demo: [
    '',
    'Run the built-in demo sweep (recall of two overlapping sequences) on this machine, a couple of minutes on 2 cores',
  ],
  simulate: ['', 'Run one trial of a model and print its metrics as one JSON object'],
  schema: ['', 'print the JSON Schema of the sweep file (for editor validation), or write it to a file'],
  plan: [
    '<file>',
    'Check a sweep file and show its jobs, a sample of its points and an estimate of core-hours; runs nothing else',
  ],
  run: ['<file>', 'Run every job of a sweep file that has no result yet, on this machine; run it again to resume'],
  submit: ['<file>', 'Queue every job of a sweep that has no result yet, for workers on any machine; safe to repeat'],
  worker: ['', 'Serve queued jobs of any sweep until stopped (Ctrl-C or SIGTERM finishes running jobs first)'],
  progress: [
    '<dir>',
    'How far a sweep is: finished jobs from the result files, waiting/running/failed jobs from the queue, rate and time left',
  ],
  finish: [
    '<dir>',
    'Follow a queued sweep to its end: gather results from Redis as they come, queue again what Redis lost, build the report',
  ],
  requeue: [
    '<dir>',
    'Resume a sweep: queue every job that has no result and is not in the queue (also after Redis lost everything)',
  ],
  gather: [
    '<dir>',
    'Copy records of finished jobs held in Redis into this folder, then free them in Redis (for workers without a shared disk)',
  ],
  cancel: [
    '<dir>',
    "Remove the sweep's waiting jobs from the queue; running jobs finish and keep their results (`requeue` resumes)",
  ],
  report: [
    '<dir>',
    'Summarise a sweep folder into tables, phase diagrams and index.html (in DIR/report/); works while the sweep is still running',
  ],
  inspect: [
    '<dir>',
    'Re-run one job of a sweep deterministically, check it against its stored result (exit 1 if they differ), and draw its recall trace as SVG',
  ],
  sweeps: [
    '[root]',
    'List the sweeps under a results root: jobs done of planned, failing jobs, last activity, and whether the report is up to date',
  ],
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

// The first word that is not an option names the sub-command (`help run` asks
// for run's help): only that module is loaded. Anything else (--version, help,
// a typo, no command) gets every command from SUMMARIES, which loads none.
const words = process.argv.slice(2).filter((arg) => !arg.startsWith('-'));
const first = words[0] === 'help' ? words[1] : words[0];
const load = first !== undefined && Object.hasOwn(COMMANDS, first) ? COMMANDS[first] : undefined;
if (load !== undefined) {
  (await load())(program);
} else {
  for (const [name, [args, summary]] of Object.entries(SUMMARIES)) {
    program.command(args === '' ? name : `${name} ${args}`).description(summary);
  }
}

await program.parseAsync(process.argv);
