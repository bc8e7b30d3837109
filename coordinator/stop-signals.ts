/** Stop requests from the terminal or a supervisor, in two steps. */
export interface StopSignals {
  /** Aborted by the first SIGINT/SIGTERM: finish running jobs, start no more. */
  readonly graceful: AbortSignal;
  /** Aborted by the second: abandon running jobs. */
  readonly abandon: AbortSignal;
  dispose(): void;
}

/**
 * Install SIGINT/SIGTERM handlers for a run. `say` tells the person what is
 * happening (the first signal is otherwise silent while jobs finish).
 */
export function stopOnSignals(say: (line: string) => void): StopSignals {
  const graceful = new AbortController();
  const abandon = new AbortController();
  const onSignal = (signal: NodeJS.Signals): void => {
    if (!graceful.signal.aborted) {
      say(`${signal}: stopping after the running jobs finish (send it again to abandon them)`);
      graceful.abort();
    } else if (!abandon.signal.aborted) {
      say(`${signal}: abandoning the running jobs`);
      abandon.abort();
    }
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  return {
    graceful: graceful.signal,
    abandon: abandon.signal,
    dispose() {
      process.off('SIGINT', onSignal);
      process.off('SIGTERM', onSignal);
    },
  };
}
