import type { Command } from 'commander';

interface CommandArgument {
  /** As commander spells it: `<file>` (required) or `[root]` (optional). */
  readonly name: string;
  readonly description: string;
  readonly default?: string;
}

export interface CommandSpec {
  readonly summary: string;
  readonly args: readonly CommandArgument[];
}

const SWEEP_FILE: CommandArgument = { name: '<file>', description: 'sweep file (YAML or JSON)' };
const SWEEP_DIR: CommandArgument = {
  name: '<dir>',
  description: 'the sweep folder, <results root>/<name> (the one holding sweep.json)',
};

/**
 * Every sub-command: its one-line summary and its arguments, the only place
 * either is written. The top-level help lists commands from here without
 * loading any command module; each command module names itself with
 * `defineCommand`, which reads the same entry. Command modules import this
 * file and nothing imports them but `command-list.ts`, so the two never form
 * a circle.
 */
export const COMMAND_SPECS = {
  demo: {
    summary:
      'Run the built-in demo sweep (recall of two overlapping sequences) on this machine, a couple of minutes on 2 cores',
    args: [],
  },
  simulate: {
    summary: 'Run one trial of a model and print its metrics as one JSON object',
    args: [],
  },
  schema: {
    summary: 'Print the JSON Schema of sweep files, with every model and its parameter names (for editors)',
    args: [],
  },
  plan: {
    summary:
      'Check a sweep file and show its jobs, a sample of its points and an estimate of core-hours; runs nothing else',
    args: [SWEEP_FILE],
  },
  run: {
    summary: 'Run every job of a sweep file that has no result yet, on this machine; run it again to resume',
    args: [SWEEP_FILE],
  },
  submit: {
    summary: 'Queue every job of a sweep that has no result yet, for workers on any machine; safe to repeat',
    args: [SWEEP_FILE],
  },
  worker: {
    summary: 'Serve queued jobs of any sweep until stopped (Ctrl-C or SIGTERM finishes running jobs first)',
    args: [],
  },
  progress: {
    summary:
      'How far a sweep is: finished jobs from the result files, waiting/running/failed jobs from the queue, rate and time left',
    args: [SWEEP_DIR],
  },
  finish: {
    summary:
      'Follow a queued sweep to its end: gather results from Redis as they come, queue again what Redis lost, build the report',
    args: [{ name: '<dir>', description: 'the sweep folder, <results root>/<name>, as submit made it' }],
  },
  requeue: {
    summary:
      'Resume a sweep: queue every job that has no result and is not in the queue (also after Redis lost everything)',
    args: [SWEEP_DIR],
  },
  gather: {
    summary:
      'Copy records of finished jobs held in Redis into this folder, then free them in Redis (for workers without a shared disk)',
    args: [SWEEP_DIR],
  },
  cancel: {
    summary:
      "Remove the sweep's waiting jobs from the queue; running jobs finish and keep their results (`requeue` resumes)",
    args: [SWEEP_DIR],
  },
  report: {
    summary:
      'Summarise a sweep folder into tables, phase diagrams and index.html (in DIR/report/); works while the sweep is still running',
    args: [SWEEP_DIR],
  },
  inspect: {
    summary:
      'Re-run one job of a sweep deterministically, check it against its stored result (exit 1 if they differ), and draw its recall trace as SVG',
    args: [SWEEP_DIR],
  },
  sweeps: {
    summary:
      'List the sweeps under a results root: jobs done of planned, failing jobs, last activity, and whether the report is up to date',
    args: [
      {
        name: '[root]',
        description: 'results root (the --out folder of run and submit), or one sweep folder',
        default: 'results',
      },
    ],
  },
} as const satisfies Record<string, CommandSpec>;

export type CommandName = keyof typeof COMMAND_SPECS;

export function isCommandName(word: string): word is CommandName {
  return Object.hasOwn(COMMAND_SPECS, word);
}

/** `program.command(name)` with the summary and arguments of its entry in COMMAND_SPECS. */
export function defineCommand(program: Command, name: CommandName): Command {
  const entry: CommandSpec = COMMAND_SPECS[name];
  const command = program.command(name).description(entry.summary);
  for (const arg of entry.args) {
    if (arg.default === undefined) command.argument(arg.name, arg.description);
    else command.argument(arg.name, arg.description, arg.default);
  }
  return command;
}

/** The top-level listing: every command with its arguments and summary, no module loaded. */
export function listCommands(program: Command): void {
  for (const [name, entry] of Object.entries(COMMAND_SPECS) as [string, CommandSpec][]) {
    const args = entry.args.map((a) => a.name).join(' ');
    program.command(args === '' ? name : `${name} ${args}`).description(entry.summary);
  }
}
