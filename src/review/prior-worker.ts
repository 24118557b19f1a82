/**
 * The body of the prior worker thread (started by prior-worker-pool.ts through
 * prior-worker-entry.mjs): fits for a large review that can run beside the main thread on a
 * second core. Messages in: "grid" (the grid family's sensitivity fit on a coarse grid) and
 * "refits" (bootstrap refits, claimed one at a time from a counter shared with the main thread,
 * so that both threads keep busy until none are left). Every fit is a pure function of its
 * inputs, so a result is the same whichever thread computes it.
 */
import { parentPort, workerData } from "node:worker_threads";
import { type Resample, refitResample } from "../stats/bootstrap-prior.ts";
import type { PriorComponent } from "../stats/effect-prior.ts";
import { type FitFamily, fitOnMatrix } from "../stats/fit-effect-prior.ts";
import { likelihoodMatrix } from "../stats/likelihood-matrix.ts";
import { thetaGridComponents } from "../stats/prior-grid.ts";

export interface PriorWorkerData {
  readonly y: Float64Array;
  readonly s: Float64Array;
}

export type PriorWorkerRequest =
  | { readonly kind: "grid"; readonly points: number; readonly nullWeight: number }
  | {
      readonly kind: "refits";
      readonly grid: readonly PriorComponent[];
      readonly family: FitFamily;
      readonly nullWeight: number;
      readonly componentWeights: Float64Array;
      readonly resamples: readonly Resample[];
      /** Shared Int32Array(1): the next resample to claim. */
      readonly next: Int32Array;
    };

if (parentPort) {
  const port = parentPort;
  const { y, s } = workerData as PriorWorkerData;
  port.on("message", (request: PriorWorkerRequest) => {
    try {
      if (request.kind === "grid") {
        const grid = thetaGridComponents({ y, s }, request.points);
        const fit = fitOnMatrix(likelihoodMatrix(y, s, grid), grid, "grid", request.nullWeight);
        port.postMessage({ kind: "grid", fit });
      } else {
        const matrix = likelihoodMatrix(y, s, request.grid);
        for (;;) {
          const index = Atomics.add(request.next, 0, 1);
          if (index >= request.resamples.length) break;
          const fit = refitResample(matrix, request, request.resamples[index] as Resample);
          port.postMessage({ kind: "refit", index, fit });
        }
        port.postMessage({ kind: "refits-done" });
      }
    } catch (error) {
      port.postMessage({ kind: "error", message: error instanceof Error ? error.message : String(error) });
    }
  });
}
