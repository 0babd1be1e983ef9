/** Minimal structured logger: one line per event, errors with their stack. */
export interface Logger {
  info(msg: string): void;
  warn(msg: string): void;
  error(msg: string, err?: unknown): void;
}

export function createLogger(quiet = false): Logger {
  const stamp = () => new Date().toISOString();
  return {
    info: (msg) => {
      if (!quiet) console.log(`${stamp()} info ${msg}`);
    },
    warn: (msg) => {
      if (!quiet) console.warn(`${stamp()} warn ${msg}`);
    },
    error: (msg, err) => {
      console.error(`${stamp()} error ${msg}`, err instanceof Error ? err.stack : (err ?? ''));
    },
  };
}
