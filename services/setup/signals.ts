/**
 * Stop signals (SIGINT, SIGTERM) for long-running commands, handled in one place so every command
 * stops the same way: the first signal asks the command to stop cleanly.
 */

const STOP_SIGNALS = ['SIGINT', 'SIGTERM'] as const;

/** What to do on a second stop signal while the first one is still being handled. */
export interface StopSignalOptions {
  /**
   * Called for every signal after the first. When absent, the handlers are removed after the first
   * signal, so a second one ends the process the default way.
   */
  onRepeat?: (signal: NodeJS.Signals) => void;
}

/**
 * Call `onStop` on the first SIGINT or SIGTERM. Returns a function that removes the handlers (call
 * it when the command ends on its own, so a finished command leaves no listeners behind).
 */
export function onStopSignal(
  onStop: (signal: NodeJS.Signals) => void,
  options: StopSignalOptions = {},
): () => void {
  let seen = false;
  const release = () => {
    for (const signal of STOP_SIGNALS) process.off(signal, handler);
  };
  const handler = (signal: NodeJS.Signals) => {
    if (seen) {
      options.onRepeat?.(signal);
      return;
    }
    seen = true;
    if (options.onRepeat === undefined) release();
    onStop(signal);
  };
  for (const signal of STOP_SIGNALS) process.on(signal, handler);
  return release;
}

/** Resolves with the first SIGINT or SIGTERM; a second signal ends the process the default way. */
export function untilStopSignal(): Promise<NodeJS.Signals> {
  return new Promise((resolve) => {
    onStopSignal(resolve);
  });
}
