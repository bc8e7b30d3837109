import { Command, CommanderError } from 'commander';
import { CODE_VERSION } from '../shared/version.js';
import { EXIT_INPUT } from './cli-support.js';
import { registerSimulate } from './commands/simulate.js';
import { registerSchema } from './commands/schema.js';
import { registerPlan } from './commands/plan.js';
import { registerRun } from './commands/run.js';
import { registerDemo } from './commands/demo.js';
import { registerSubmit } from './commands/submit.js';
import { registerWorker } from './commands/worker.js';
import { registerProgress } from './commands/progress.js';
import { registerRequeue } from './commands/requeue.js';
import { registerGather } from './commands/gather.js';
import { registerCancel } from './commands/cancel.js';
import { registerReport } from './commands/report.js';
import { registerInspect } from './commands/inspect.js';

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

for (const register of [
  registerDemo,
  registerSimulate,
  registerSchema,
  registerPlan,
  registerRun,
  registerSubmit,
  registerWorker,
  registerProgress,
  registerRequeue,
  registerGather,
  registerCancel,
  registerReport,
  registerInspect,
]) {
  register(program);
}

await program.parseAsync(process.argv);
