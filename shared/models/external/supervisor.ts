/**
 * Starts a model program and makes sure it never outlives the recallscape
 * process that asked for it. Run as `node supervisor.js PROGRAM [ARGS...]`
 * with file descriptor 3 a pipe from that process.
 *
 * The program gets this process's stdin, stdout and stderr as they are (the
 * pipes of the line protocol, no copying in between) and runs in a process
 * group of its own. When fd 3 reaches its end (recallscape closed it, or died
 * even by SIGKILL, which closes every descriptor it had), on SIGTERM, or when
 * this process is re-parented, the whole group is killed with SIGKILL.
 * SIGINT and SIGHUP are ignored: the recallscape process decides.
 * When the program exits by itself, what it left behind in its group is
 * killed too and this process exits with the program's code (128 + signal
 * number for a signal).
 *
 * Only Node built-ins: it starts once per worker thread and should start fast.
 * It never writes to stdout, which belongs to the protocol.
 */
import { spawn } from 'node:child_process';
import { Socket } from 'node:net';
import { constants } from 'node:os';

const [program, ...args] = process.argv.slice(2);
if (program === undefined) {
  process.stderr.write('recallscape supervisor: no program given\n');
  process.exit(2);
}

const parent = process.ppid;
// detached: a new session and process group led by the program, so one kill reaches its children too.
const child = spawn(program, args, { stdio: 'inherit', detached: true });

function killGroup(): void {
  if (child.pid === undefined) return;
  try {
    process.kill(-child.pid, 'SIGKILL');
  } catch {
    // The group is already gone.
  }
}

let ending = false;
let exited = false;
function end(code: number): void {
  if (ending) return;
  ending = true;
  killGroup();
  // Wait for the program's exit (so it is reaped, not left a zombie), but not forever.
  if (exited || child.pid === undefined) process.exit(code);
  child.once('exit', () => process.exit(code));
  setTimeout(() => process.exit(code), 2000).unref();
}

child.on('error', (error: NodeJS.ErrnoException) => {
  const why = error.code === 'ENOENT' ? 'not found' : error.code === 'EACCES' ? 'not executable' : error.message;
  process.stderr.write(`recallscape supervisor: cannot start ${program}: ${why}\n`);
  end(127);
});

child.on('exit', (code, signal) => {
  exited = true;
  const number = signal === null ? undefined : constants.signals[signal];
  end(code ?? 128 + (number ?? 0));
});

const watchdog = new Socket({ fd: 3, readable: true, writable: false });
watchdog.on('end', () => end(137));
watchdog.on('close', () => end(137));
watchdog.on('error', () => end(137));
watchdog.resume();

process.on('SIGTERM', () => end(137));
// Ctrl-C in a terminal reaches the whole foreground group: the worker decides
// whether running jobs finish (a graceful stop), and it closes fd 3 when it goes.
process.on('SIGINT', () => undefined);
process.on('SIGHUP', () => undefined);

// Belt and braces for a pipe that stays open because a descriptor leaked somewhere.
setInterval(() => {
  if (process.ppid !== parent) end(137);
}, 1000).unref();
