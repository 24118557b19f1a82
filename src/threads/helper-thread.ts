/**
 * One helper thread per process for large pure computations (helper-jobs.ts), so that a 2-core
 * machine works on both cores. It is started on first use and kept for later jobs, unref'd while
 * idle so that it never holds the process open. Jobs share their large inputs and outputs through
 * SharedArrayBuffers, and split their work with Atomics counters, so the calling thread works
 * beside the helper rather than waiting for it.
 *
 * The helper's code is its entry (helper-thread-entry.ts) bundled by esbuild into one CommonJS text
 * run with `eval`: a worker does not inherit the main thread's tsx hooks, and registering them
 * inside the worker costs about 0.25 s before its first message, the bundle about 0.05 s and the
 * worker's start about 0.06 s (measured on the 2-core machine of the benchmarks). The bundle is
 * built in the background when this module loads (or synchronously, if a job comes first), and
 * the worker started synchronously, so a job can be posted at once and the helper takes it when it
 * is up.
 *
 * Where a thread cannot start (or PLUMBLINE_THREADS=1), helperThread() returns null and the
 * callers compute everything on the calling thread (when it cannot start or fails, a warning says
 * so once per process); results never depend on which thread computed.
 */
import { fileURLToPath } from "node:url";
import { Worker } from "node:worker_threads";
import { type BuildOptions, build, buildSync } from "esbuild";
import type { HelperJob } from "./helper-jobs.ts";

export type HelperReply =
  | { readonly jobId: number; readonly kind: "done"; readonly value: unknown }
  | { readonly jobId: number; readonly kind: "progress"; readonly value: unknown }
  | { readonly jobId: number; readonly kind: "error"; readonly message: string };

export class HelperThread {
  private failure: Error | null = null;
  private readonly listeners = new Map<number, (reply: HelperReply | Error) => void>();
  private nextJobId = 1;

  constructor(private readonly worker: Worker) {
    worker.on("message", (reply: HelperReply) => this.listeners.get(reply.jobId)?.(reply));
    const fail = (error: Error) => {
      this.failure ??= error;
      for (const listener of [...this.listeners.values()]) listener(this.failure);
      this.listeners.clear();
      forget(this);
    };
    worker.on("error", (error) => {
      warnOnce(`the helper thread failed (${error.message}); computing on one thread`);
      fail(error);
    });
    worker.on("exit", (code) => fail(new Error(`the helper thread stopped (exit code ${code})`)));
    // After the listeners: attaching a message listener refs the worker again.
    worker.unref();
  }

  /**
   * Posts a job; resolves with its result when the helper is done, handing partial results to
   * onProgress meanwhile; rejects when the helper reports an error or stops.
   */
  run<T>(job: HelperJob, onProgress?: (value: unknown) => void): Promise<T> {
    return new Promise<T>((resolve, reject) => {
      if (this.failure) {
        reject(this.failure);
        return;
      }
      const jobId = this.nextJobId++;
      // Held open while a job is out (a caller may be waiting on it), let go when idle.
      this.worker.ref();
      this.listeners.set(jobId, (reply) => {
        if (!(reply instanceof Error) && reply.kind === "progress") {
          onProgress?.(reply.value);
          return;
        }
        this.listeners.delete(jobId);
        if (this.listeners.size === 0) this.worker.unref();
        if (reply instanceof Error) reject(reply);
        else if (reply.kind === "error") reject(new Error(reply.message));
        else resolve(reply.value as T);
      });
      this.worker.postMessage({ jobId, job });
    });
  }

  /** Stops the thread (tests; the process does not need it to exit). */
  async stop(): Promise<void> {
    forget(this);
    await this.worker.terminate();
  }
}

let current: HelperThread | null = null;
let warned = false;

/** Says once per process that work falls back to one thread (the figures stay the same, only slower). */
function warnOnce(message: string): void {
  if (warned) return;
  warned = true;
  process.emitWarning(message, { code: "PLUMBLINE_ONE_THREAD" });
}
let bundle: string | null = null;

/** A stopped or failed helper is replaced by a new one on the next call. */
function forget(helper: HelperThread): void {
  if (current === helper) current = null;
}

/** The process's helper thread, started on first call; null where none can run. */
export function helperThread(): HelperThread | null {
  if (process.env.PLUMBLINE_THREADS === "1") return null;
  if (current) return current;
  try {
    bundle ??= bundleEntry();
    current = new HelperThread(new Worker(bundle, { eval: true, workerData: { role: "plumbline-helper" } }));
  } catch (error) {
    warnOnce(`the helper thread could not start (${(error as Error).message}); computing on one thread`);
    return null;
  }
  return current;
}

const bundleOptions: BuildOptions = {
  entryPoints: [fileURLToPath(new URL("./helper-thread-entry.ts", import.meta.url))],
  bundle: true,
  write: false,
  format: "cjs",
  platform: "node",
  target: "node20",
  logLevel: "silent",
};

function bundleText(outputFiles: readonly { text: string }[] | undefined): string {
  const code = outputFiles?.[0]?.text;
  if (!code) throw new Error("the helper thread's bundle is empty");
  return code;
}

function bundleEntry(): string {
  return bundleText(buildSync(bundleOptions).outputFiles);
}

// Built in the background when this module loads (in esbuild's own process), so that the first
// helper starts without the calling thread waiting about 0.1 s for a synchronous build; if a job
// comes before it is ready, bundleEntry builds it there and then.
if (process.env.PLUMBLINE_THREADS !== "1") {
  build(bundleOptions).then(
    (built) => {
      bundle ??= bundleText(built.outputFiles);
    },
    () => undefined,
  );
}

/** A copy of `values` over a SharedArrayBuffer, for jobs. */
export function sharedFloat64(values: ArrayLike<number>): Float64Array {
  const copy = new Float64Array(new SharedArrayBuffer(8 * Math.max(1, values.length)), 0, values.length);
  for (let i = 0; i < values.length; i++) copy[i] = values[i] as number;
  return copy;
}
