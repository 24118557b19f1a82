/**
 * A second thread for the fits of a large review (prior-worker.ts): the grid family's sensitivity
 * fit runs there while the main thread fits the other families, then both threads share the
 * bootstrap refits. On a 2-core machine this takes the longest part of a cold review of a large
 * history down by about the worker's share. If the worker cannot start or fails, the caller
 * computes what is missing itself, so results never depend on it.
 */
import { Worker } from "node:worker_threads";
import { drawResample, type Resample, refitResample } from "../stats/bootstrap-prior.ts";
import type { EffectPrior } from "../stats/effect-prior.ts";
import type { FamilyFit, PriorFit } from "../stats/fit-effect-prior.ts";
import { likelihoodMatrix } from "../stats/likelihood-matrix.ts";
import { createRandom } from "../stats/random.ts";
import type { PriorWorkerData, PriorWorkerRequest } from "./prior-worker.ts";

type WorkerReply =
  | { readonly kind: "grid"; readonly fit: FamilyFit }
  | { readonly kind: "refit"; readonly index: number; readonly fit: FamilyFit }
  | { readonly kind: "refits-done" }
  | { readonly kind: "error"; readonly message: string };

export class PriorWorker {
  private readonly worker: Worker;
  private failure: Error | null = null;
  private readonly listeners = new Set<(reply: WorkerReply | Error) => void>();

  private constructor(data: PriorWorkerData) {
    this.worker = new Worker(new URL("./prior-worker-entry.mjs", import.meta.url), { workerData: data });
    this.worker.on("message", (reply: WorkerReply) => {
      for (const listener of this.listeners) listener(reply);
    });
    const fail = (error: Error) => {
      this.failure ??= error;
      for (const listener of this.listeners) listener(error);
    };
    this.worker.on("error", fail);
    this.worker.on("exit", (code) => fail(new Error(`the prior worker stopped (exit code ${code})`)));
  }

  /** A worker over these results, or null where threads cannot start. */
  static start(y: Float64Array, s: Float64Array): PriorWorker | null {
    try {
      return new PriorWorker({ y, s });
    } catch {
      return null;
    }
  }

  /** The grid family fitted on `points` equally spaced grid points. */
  fitCoarseGrid(points: number, nullWeight: number): Promise<FamilyFit> {
    return this.request({ kind: "grid", points, nullWeight }, (reply, resolve) => {
      if (reply.kind === "grid") resolve(reply.fit);
    });
  }

  /**
   * Refits resamples claimed from the shared counter `next` until none are left, handing each to
   * onRefit; resolves when the worker has claimed past the end.
   */
  shareRefits(
    fit: PriorFit,
    resamples: readonly Resample[],
    next: Int32Array,
    onRefit: (index: number, refit: FamilyFit) => void,
  ): Promise<void> {
    const request: PriorWorkerRequest = {
      kind: "refits",
      grid: fit.grid,
      family: fit.family,
      nullWeight: fit.nullWeight,
      componentWeights: fit.componentWeights,
      resamples,
      next,
    };
    return this.request(request, (reply, resolve) => {
      if (reply.kind === "refit") onRefit(reply.index, reply.fit);
      else if (reply.kind === "refits-done") resolve(undefined);
    });
  }

  close(): void {
    this.listeners.clear();
    void this.worker.terminate();
  }

  private request<T>(
    request: PriorWorkerRequest,
    handle: (reply: WorkerReply, resolve: (value: T) => void) => void,
  ): Promise<T> {
    return new Promise<T>((resolve, reject) => {
      if (this.failure) {
        reject(this.failure);
        return;
      }
      const listener = (reply: WorkerReply | Error) => {
        const settle = (value: T) => {
          this.listeners.delete(listener);
          resolve(value);
        };
        if (reply instanceof Error) {
          this.listeners.delete(listener);
          reject(reply);
        } else if (reply.kind === "error") {
          this.listeners.delete(listener);
          reject(new Error(reply.message));
        } else handle(reply, settle);
      };
      this.listeners.add(listener);
      this.worker.postMessage(request);
    });
  }
}

/**
 * The bootstrap refits of `fit` shared between this thread and the worker: the resamples are
 * drawn here first, in the order bootstrapPrior draws them from the same seed, so the refitted
 * priors are the ones bootstrapPrior gives, whichever thread fits each. Refits the worker claimed
 * but did not deliver (it failed) are done here.
 */
export async function refitsSharedWithWorker(
  worker: PriorWorker,
  y: Float64Array,
  s: Float64Array,
  fit: PriorFit,
  replicates: number,
  seed: number,
  onProgress: (done: number, total: number) => void,
): Promise<EffectPrior[]> {
  const random = createRandom(seed);
  const counts = new Int32Array(y.length);
  const resamples = Array.from({ length: replicates }, () => drawResample(y.length, random, counts));
  const next = new Int32Array(new SharedArrayBuffer(4));
  const priors: (EffectPrior | undefined)[] = new Array(replicates);
  let done = 0;
  const finish = (index: number, refit: FamilyFit) => {
    priors[index] = refit.prior;
    done++;
    onProgress(done, replicates);
  };
  const fromWorker = worker.shareRefits(fit, resamples, next, finish).catch(() => undefined);
  const matrix = likelihoodMatrix(y, s, fit.grid);
  for (;;) {
    const index = Atomics.add(next, 0, 1);
    if (index >= replicates) break;
    finish(index, refitResample(matrix, fit, resamples[index] as Resample));
  }
  await fromWorker;
  for (let index = 0; index < replicates; index++)
    if (priors[index] === undefined) finish(index, refitResample(matrix, fit, resamples[index] as Resample));
  return priors as EffectPrior[];
}
