/** Where a command writes; injected so that tests capture output without a subprocess. */
export interface CommandIo {
  out(text: string): void;
  err(text: string): void;
  /** Progress on long runs; goes to stderr so that --json output on stdout stays one document. */
  progress(text: string): void;
}

export const processIo: CommandIo = {
  out: (text) => process.stdout.write(`${text}\n`),
  err: (text) => process.stderr.write(`${text}\n`),
  progress: (text) => {
    if (process.stderr.isTTY) process.stderr.write(`\r${text}\x1b[K`);
    else process.stderr.write(`${text}\n`);
  },
};

/** Collects output in memory (for tests). */
export function memoryIo(): CommandIo & { stdout: string[]; stderr: string[] } {
  const stdout: string[] = [];
  const stderr: string[] = [];
  return {
    stdout,
    stderr,
    out: (text) => stdout.push(text),
    err: (text) => stderr.push(text),
    progress: () => undefined,
  };
}
