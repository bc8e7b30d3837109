import { Command, type CommanderError } from 'commander';
import { CODE_VERSION } from '../shared/version.js';
import { EXIT_FAILURE, EXIT_INPUT, printError, usageErrorText } from './cli-support.js';
import { COMMAND_LOADERS } from './command-list.js';
import { isCommandName, listCommands } from './command-specs.js';

// Output that cannot be written (a closed pipe, a full disk) ends the command
// with one line instead of an unhandled 'error' event and a stack trace.
process.stdout.on('error', (error: NodeJS.ErrnoException) => {
  if (error.code === 'EPIPE') process.exit(0);
  printError(`cannot write the output: ${error.message}`);
  process.exit(EXIT_FAILURE);
});

// The first word that is not an option names the sub-command (`help run` asks
// for run's help): only that module is loaded. Anything else (--version, help,
// a typo, no command) gets every command from the list, which loads none.
const words = process.argv.slice(2).filter((arg) => !arg.startsWith('-'));
const named = words[0] === 'help' ? words[1] : words[0];
const first = named !== undefined && isCommandName(named) ? named : undefined;

const program = new Command()
  .name('recallscape')
  .description(
    'Parameter sweeps of attractor-network memory simulations: plan, run (here or on many machines through Redis), resume, and report phase diagrams of recall success.',
  )
  .version(CODE_VERSION)
  // The parser's own errors (unknown option, missing argument, unknown
  // command) are printed by the exit hook below, in the words and with the
  // prefix of every other error, and are input errors: exit 2.
  .configureOutput({ outputError: () => {} })
  .exitOverride((err: CommanderError) => {
    if (err.code === 'commander.helpDisplayed' || err.code === 'commander.version' || err.code === 'commander.help') {
      process.exit(0);
    }
    printError(usageErrorText(err.message, first));
    process.exit(EXIT_INPUT);
  });

if (first !== undefined) (await COMMAND_LOADERS[first]())(program);
else listCommands(program);

await program.parseAsync(process.argv);
