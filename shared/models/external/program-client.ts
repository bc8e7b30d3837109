import { type ChildProcess, spawn } from 'node:child_process';
import type { Readable, Writable } from 'node:stream';
import { fileURLToPath } from 'node:url';
import { ModelFailure } from '../../errors.js';
import type { RunOutput } from '../../model.js';
import { encodeRequest, ProtocolReplySchema, type ProtocolRequest, tracePanels } from './line-protocol.js';
import { checkMetrics, type MetricDeclaration } from './metric-check.js';

export interface ProgramSpec {
  readonly id: string;
  /** Working directory of the program: the model's folder. */
  readonly folder: string;
  /** Program and arguments, the program already resolved against the folder when it is a path. */
  readonly command: readonly string[];
  readonly declared: MetricDeclaration;
  /** Extra time for the first job of a freshly started process (start-up is not the job's time). */
  readonly startupMs: number;
}

export interface ProgramRunOptions {
  readonly timeoutMs: number;
  readonly trace?: boolean;
}

/** Longest reply line accepted (a reply with a trace can be large; a runaway printer cannot fill memory). */
export const MAX_REPLY_BYTES = 64 * 1024 * 1024;
/** Lines of the program's stderr kept for failure messages. */
const STDERR_LINES = 12;
const STDERR_LINE_CHARS = 300;

/** Environment variables a model program never needs and should not see (credentials of the queue). */
const HIDDEN_ENV = /^RECALLSCAPE_REDIS/;

type Event =
  | { readonly type: 'line'; readonly line: string }
  | { readonly type: 'closed'; readonly how: string }
  | { readonly type: 'too-long' };

/** One running program (through its supervisor) and what it has said so far. */
class Running {
  readonly child: ChildProcess;
  closed = false;
  /** Killed by us: never given another job, even before its 'close' arrives. */
  killed = false;
  howClosed = '';
  /** Complete stdout lines that arrived while no job was waiting: output outside the protocol. */
  readonly stray: string[] = [];
  private waiter: ((event: Event) => void) | undefined;
  private partial: Buffer[] = [];
  private partialBytes = 0;
  private readonly stderrTail: string[] = [];
  private stderrPartial = '';

  constructor(spec: ProgramSpec, supervisor: string) {
    const env: NodeJS.ProcessEnv = {};
    for (const [name, value] of Object.entries(process.env)) if (!HIDDEN_ENV.test(name)) env[name] = value;
    this.child = spawn(process.execPath, [supervisor, ...spec.command], {
      cwd: spec.folder,
      env,
      // fd 3 is the supervisor's watchdog: it ends when this process closes it or dies.
      stdio: ['pipe', 'pipe', 'pipe', 'pipe'],
    });
    const stdout = this.child.stdout as Readable;
    const stderr = this.child.stderr as Readable;
    (this.child.stdin as Writable).on('error', () => {
      // EPIPE after the program died: reported through 'close'.
    });
    stdout.on('data', (chunk: Buffer) => this.onStdout(chunk));
    stderr.setEncoding('utf8');
    stderr.on('data', (text: string) => this.onStderr(text));
    this.child.on('error', (error) => this.onClose(`could not be started (${error.message})`));
    this.child.on('close', (code, signal) => {
      const status = signal !== null ? `was killed by ${signal}` : `exited with code ${code}`;
      this.onClose(code === 127 ? `could not be started (${status})` : status);
    });
  }

  /** Wait for the next stdout line or the end of the process. */
  next(): Promise<Event> {
    const line = this.stray.shift();
    if (line !== undefined) return Promise.resolve({ type: 'line', line });
    if (this.closed) return Promise.resolve({ type: 'closed', how: this.howClosed });
    return new Promise((resolve) => {
      this.waiter = resolve;
    });
  }

  stopWaiting(): void {
    this.waiter = undefined;
  }

  send(text: string): void {
    (this.child.stdin as Writable).write(text);
  }

  /** The last lines the program wrote to stderr, for failure messages. */
  stderrText(): string {
    const lines = [...this.stderrTail];
    if (this.stderrPartial !== '') lines.push(this.stderrPartial.slice(0, STDERR_LINE_CHARS));
    return lines.slice(-STDERR_LINES).join('\n');
  }

  /** Resolves once the process and its pipes have closed (all of stderr read), or after `capMs`. */
  drained(capMs: number): Promise<void> {
    if (this.closed) return Promise.resolve();
    return new Promise((resolve) => {
      const timer = setTimeout(resolve, capMs);
      this.child.once('close', () => {
        clearTimeout(timer);
        resolve();
      });
    });
  }

  /** Keep the thread or process alive only while a job waits for this program. */
  hold(on: boolean): void {
    const handles = [this.child, this.child.stdout, this.child.stderr, this.child.stdin, this.child.stdio[3]];
    for (const handle of handles) {
      const h = handle as { ref?: () => void; unref?: () => void } | null;
      if (on) h?.ref?.();
      else h?.unref?.();
    }
  }

  /** Kill the program's whole process group (the supervisor does it when its watchdog pipe ends). */
  kill(): void {
    this.killed = true;
    (this.child.stdio[3] as Writable | null)?.destroy();
    this.child.kill('SIGTERM');
  }

  private deliver(event: Event): void {
    const waiter = this.waiter;
    if (waiter !== undefined) {
      this.waiter = undefined;
      waiter(event);
    } else if (event.type === 'line') {
      if (this.stray.length < 5) this.stray.push(event.line);
    }
  }

  private onStdout(chunk: Buffer): void {
    let start = 0;
    for (;;) {
      const newline = chunk.indexOf(10, start);
      if (newline < 0) break;
      let line: string;
      if (this.partialBytes > 0) {
        this.partial.push(chunk.subarray(start, newline));
        line = Buffer.concat(this.partial).toString('utf8');
        this.partial = [];
        this.partialBytes = 0;
      } else {
        line = chunk.toString('utf8', start, newline);
      }
      start = newline + 1;
      this.deliver({ type: 'line', line });
    }
    if (start < chunk.length) {
      this.partial.push(chunk.subarray(start));
      this.partialBytes += chunk.length - start;
      if (this.partialBytes > MAX_REPLY_BYTES) {
        this.partial = [];
        this.partialBytes = 0;
        this.deliver({ type: 'too-long' });
        this.kill();
      }
    }
  }

  private onStderr(text: string): void {
    const parts = (this.stderrPartial + text).split('\n');
    this.stderrPartial = (parts.pop() ?? '').slice(-4 * STDERR_LINE_CHARS);
    for (const part of parts) {
      this.stderrTail.push(part.length > STDERR_LINE_CHARS ? `${part.slice(0, STDERR_LINE_CHARS)}...` : part);
      if (this.stderrTail.length > STDERR_LINES) this.stderrTail.shift();
    }
  }

  private onClose(how: string): void {
    if (this.closed) return;
    this.closed = true;
    this.howClosed = how;
    this.deliver({ type: 'closed', how });
  }
}

function excerpt(text: string, max = 200): string {
  const shown = JSON.stringify(text.length > max ? `${text.slice(0, max)}...` : text);
  return shown;
}

/** A failed exchange, before the program's stderr is added to it; `discard` ends the process. */
class Problem extends Error {
  readonly retryable: boolean;
  readonly discard: boolean;
  constructor(
    readonly kind: ModelFailure['kind'],
    message: string,
    how: { readonly retryable: boolean; readonly discard: boolean },
  ) {
    super(message);
    this.retryable = how.retryable;
    this.discard = how.discard;
  }
}

/**
 * Runs jobs of one program model over the line protocol. One process (per
 * client, and so per worker thread) serves job after job; it starts on the
 * first job and again after a crash, a timeout or output outside the
 * protocol. Jobs are sent one at a time. Failures are thrown as ModelFailure
 * with their kind and the program's last stderr lines.
 */
export class ProgramClient {
  private running: Running | undefined;
  private queue: Promise<unknown> = Promise.resolve();
  private readonly supervisor: string;

  constructor(
    private readonly spec: ProgramSpec,
    supervisor: URL = new URL('./supervisor.js', import.meta.url),
  ) {
    this.supervisor = fileURLToPath(supervisor);
  }

  /** Process id of the supervisor now serving jobs (tests), if any. */
  get pid(): number | undefined {
    const running = this.running;
    return running === undefined || running.closed || running.killed ? undefined : running.child.pid;
  }

  run(request: ProtocolRequest, options: ProgramRunOptions): Promise<RunOutput> {
    const result = this.queue.then(() => this.runOne(request, options));
    this.queue = result.catch(() => undefined);
    return result;
  }

  /** Stop the program (its whole process group). Safe to call more than once. */
  async close(): Promise<void> {
    const running = this.running;
    this.running = undefined;
    if (running === undefined || running.closed) return;
    const closed = new Promise<void>((resolve) => running.child.once('close', () => resolve()));
    running.kill();
    await closed;
  }

  private start(): Running {
    if (this.running === undefined || this.running.closed || this.running.killed) {
      this.running = new Running(this.spec, this.supervisor);
    }
    return this.running;
  }

  /** Throw away a process whose output can no longer be matched to jobs. */
  private discard(running: Running): void {
    if (this.running === running) this.running = undefined;
    running.kill();
  }

  private async runOne(request: ProtocolRequest, options: ProgramRunOptions): Promise<RunOutput> {
    const fresh = this.running === undefined || this.running.closed || this.running.killed;
    const running = this.start();
    try {
      return await this.exchange(running, request, options, fresh);
    } catch (error) {
      if (!(error instanceof Problem)) throw error;
      if (error.discard) this.discard(running);
      // Let stderr catch up with stdout (a separate pipe): a killed process
      // until it has closed, a kept one for a turn of the event loop.
      await (error.discard ? running.drained(2_000) : new Promise<void>((r) => setImmediate(r)));
      const stderr = running.stderrText();
      const tail = stderr === '' ? ' (nothing on stderr)' : `\nlast stderr lines of the model:\n${stderr}`;
      throw new ModelFailure(error.kind, `model ${this.spec.id}: ${error.message}${tail}`, error.retryable);
    }
  }

  private async exchange(
    running: Running,
    request: ProtocolRequest,
    options: ProgramRunOptions,
    fresh: boolean,
  ): Promise<RunOutput> {
    const stray = running.stray.shift();
    if (stray !== undefined) {
      throw new Problem(
        'exception',
        `the program wrote to stdout outside the protocol: ${excerpt(stray)}; stdout is for replies only, write anything else to stderr`,
        { retryable: true, discard: true },
      );
    }
    // A freshly started program also needs time to start (interpreter, imports): not the job's time.
    const limitMs = options.timeoutMs + (fresh ? this.spec.startupMs : 0);
    running.hold(true);
    let timer: NodeJS.Timeout | undefined;
    try {
      running.send(encodeRequest(options.trace === true ? { ...request, trace: true } : request));
      const timeout = new Promise<'timeout'>((resolve) => {
        timer = setTimeout(() => resolve('timeout'), limitMs);
      });
      const event = await Promise.race([running.next(), timeout]);
      if (event === 'timeout') {
        running.stopWaiting();
        const limit = fresh
          ? `${options.timeoutMs} ms plus ${this.spec.startupMs} ms for starting the program`
          : `${options.timeoutMs} ms`;
        // Not retried, like every job over its time limit (shared/job-time-limit.ts): the same job would run over again.
        throw new Problem('timeout', `no reply within the time limit of ${limit}; the program was killed`, {
          retryable: false,
          discard: true,
        });
      }
      if (event.type === 'closed') {
        throw new Problem('crashed', `the program ${event.how} before it replied`, { retryable: true, discard: true });
      }
      if (event.type === 'too-long') {
        throw new Problem('exception', `a reply line longer than ${MAX_REPLY_BYTES} bytes`, {
          retryable: false,
          discard: true,
        });
      }
      return this.readReply(request.key, event.line);
    } finally {
      if (timer !== undefined) clearTimeout(timer);
      running.hold(false);
    }
  }

  private readReply(key: string, line: string): RunOutput {
    let json: unknown;
    try {
      json = JSON.parse(line);
    } catch {
      throw new Problem(
        'exception',
        `the reply is not JSON: ${excerpt(line)}; stdout is for replies only, write anything else to stderr`,
        { retryable: true, discard: true },
      );
    }
    const parsed = ProtocolReplySchema.safeParse(json);
    const replyKey = (json as { key?: unknown } | null)?.key;
    if (replyKey !== key) {
      throw new Problem(
        'exception',
        `the reply is not for this job: expected "key": "${key}", got ${excerpt(JSON.stringify(replyKey) ?? 'no key')}`,
        { retryable: true, discard: true },
      );
    }
    if (!parsed.success) {
      const fields = parsed.error.issues
        .slice(0, 3)
        .map((i) => `${i.path.join('.') || '(reply)'}: ${i.message}`)
        .join('; ');
      throw new Problem(
        'exception',
        `the reply is not {"key", "metrics"} or {"key", "error"}: ${fields}; reply ${excerpt(line)}`,
        { retryable: false, discard: false },
      );
    }
    const reply = parsed.data;
    if ('error' in reply) {
      throw new Problem('exception', `the program reported an error: ${reply.error.slice(0, 1000)}`, {
        retryable: true,
        discard: false,
      });
    }
    const checked = checkMetrics(this.spec.declared, reply.metrics);
    if (!checked.ok) {
      throw new Problem('exception', `wrong metrics: ${checked.problem}`, { retryable: false, discard: false });
    }
    return reply.trace === undefined
      ? { metrics: checked.metrics }
      : { metrics: checked.metrics, trace: tracePanels(reply.trace) };
  }
}
