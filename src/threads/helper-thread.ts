/**
 * One helper thread per process for large pure computations (src/stats functions over many rows),
 * so that a 2-core machine works on both cores. It is started on first use and kept for later
 * jobs, unref'd so that it never holds the process open. Jobs share their inputs and outputs
 * through SharedArrayBuffers and split their rows with an Atomics counter (posterior-threads.ts),
 * so the calling thread starts at once and the helper joins when it is up.
 *
 * The helper's code is its entry (helper-thread-entry.ts) bundled by esbuild into one CommonJS
 * text run with `eval`: a worker does not inherit the main thread's tsx hooks, and registering
 * them inside the worker costs about 0.25 s before its first message, the bundle and start about
 * 0.15 s (measured on the 2-core machine of the benchmarks).
 *
 * Where a thread cannot start (or PLUMBLINE_THREADS=1), helperThread() resolves to null and the
 * callers compute everything on the calling thread; results never depend on which thread
 * computed a row.
 */
import { fileURLToPath } from "node:url";
import { Worker } from "node:worker_threads";
import { build } from "esbuild";
import type { EffectPrior } from "../stats/effect-prior.ts";
import type { SharedChunks } from "./shared-chunks.ts";

/** A job for the helper: the posteriors of rows (posterior-threads.ts). */
export interface HelperJob {
  readonly jobId: number;
  readonly kind: "posteriors";
  readonly prior: EffectPrior;
  readonly level: number;
  /** Over SharedArrayBuffers. */
  readonly y: Float64Array;
  readonly s: Float64Array;
  /** One SharedArrayBuffer per posterior column, in emptyPosteriorColumns' order. */
  readonly columns: readonly SharedArrayBuffer[];
  readonly chunks: SharedChunks;
}

export type HelperReply =
  | { readonly jobId: number; readonly kind: "done" }
  | { readonly jobId: number; readonly kind: "error"; readonly message: string };

export class HelperThread {
  private failure: Error | null = null;
  private readonly listeners = new Map<number, (reply: HelperReply | Error) => void>();
  private nextJobId = 1;

  constructor(private readonly worker: Worker) {
    worker.on("message", (reply: HelperReply) => this.listeners.get(reply.jobId)?.(reply));
    const fail = (error: Error) => {
      this.failure ??= error;
      for (const listener of this.listeners.values()) listener(this.failure);
      this.listeners.clear();
      forget(this);
    };
    worker.on("error", fail);
    worker.on("exit", (code) => fail(new Error(`the helper thread stopped (exit code ${code})`)));
    // After the listeners: attaching a message listener refs the worker again.
    worker.unref();
  }

  /**
   * Posts a job (its jobId is filled in here) and resolves when the helper reports it done;
   * rejects when the helper reports an error or stops.
   */
  run(job: Omit<HelperJob, "jobId">): Promise<void> {
    return new Promise<void>((resolve, reject) => {
      if (this.failure) {
        reject(this.failure);
        return;
      }
      const jobId = this.nextJobId++;
      // Held open while a job is out (a caller may be waiting on it), let go when idle.
      this.worker.ref();
      this.listeners.set(jobId, (reply) => {
        this.listeners.delete(jobId);
        if (this.listeners.size === 0) this.worker.unref();
        if (reply instanceof Error) reject(reply);
        else if (reply.kind === "error") reject(new Error(reply.message));
        else resolve();
      });
      this.worker.postMessage({ ...job, jobId } as HelperJob);
    });
  }

  /** Stops the thread (tests; the process does not need it to exit). */
  async stop(): Promise<void> {
    forget(this);
    await this.worker.terminate();
  }
}

let started: Promise<HelperThread | null> | null = null;
let current: HelperThread | null = null;

/** A stopped or failed helper is replaced by a new one on the next call. */
function forget(helper: HelperThread): void {
  if (current !== helper) return;
  current = null;
  started = null;
}

/** The process's helper thread, started on first call; null where none can run. */
export function helperThread(): Promise<HelperThread | null> {
  if (process.env.PLUMBLINE_THREADS === "1") return Promise.resolve(null);
  started ??= startHelper().catch(() => null);
  return started;
}

async function startHelper(): Promise<HelperThread> {
  const entry = fileURLToPath(new URL("./helper-thread-entry.ts", import.meta.url));
  const bundled = await build({
    entryPoints: [entry],
    bundle: true,
    write: false,
    format: "cjs",
    platform: "node",
    target: "node20",
    logLevel: "silent",
  });
  const code = bundled.outputFiles[0]?.text;
  if (!code) throw new Error("the helper thread's bundle is empty");
  current = new HelperThread(new Worker(code, { eval: true, workerData: { role: "plumbline-helper" } }));
  return current;
}
