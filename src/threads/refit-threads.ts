/**
 * The fits of a large review on two threads (review-fits.ts): the grid family's coarse
 * sensitivity fit runs on the helper thread (helper-thread.ts) while the calling thread fits the
 * other families, then both threads share the bootstrap refits. If the helper cannot start or
 * fails, the calling thread computes what is missing itself, so results never depend on it.
 */
import { drawResample, type Resample, refitResample } from "../stats/bootstrap-prior.ts";
import type { EffectPrior } from "../stats/effect-prior.ts";
import type { FamilyFit, PriorFit } from "../stats/fit-effect-prior.ts";
import type { LikelihoodMatrix } from "../stats/likelihood-matrix.ts";
import { createRandom } from "../stats/random.ts";
import type { RefitProgress } from "./helper-jobs.ts";
import type { HelperThread } from "./helper-thread.ts";
import { yieldToEventLoop } from "./shared-chunks.ts";

/** The grid family fitted on `points` equally spaced grid points, on the helper. */
export function coarseGridOnHelper(
  helper: HelperThread,
  y: Float64Array,
  s: Float64Array,
  points: number,
  nullWeight: number,
): Promise<FamilyFit> {
  return helper.run<FamilyFit>({ kind: "coarse-grid", y, s, points, nullWeight });
}

/**
 * The bootstrap refits of `fit` on its likelihood matrix (over SharedArrayBuffers, so the helper
 * reads it without a copy), shared between this thread and the helper (null: all here). The
 * resamples are drawn here first, in the order bootstrapPrior draws them from the same seed, so
 * the refitted priors are the ones bootstrapPrior gives, whichever thread fits each. Refits the
 * helper claimed but did not deliver (it failed) are done here.
 */
export async function refitsOnThreads(
  helper: HelperThread | null,
  fit: PriorFit,
  matrix: LikelihoodMatrix,
  replicates: number,
  seed: number,
  onProgress: (done: number, total: number) => void,
): Promise<EffectPrior[]> {
  const random = createRandom(seed);
  const counts = new Int32Array(matrix.rows);
  const resamples = Array.from({ length: replicates }, () => drawResample(matrix.rows, random, counts));
  const next = new Int32Array(new SharedArrayBuffer(4));
  const priors: (EffectPrior | undefined)[] = new Array(replicates);
  let done = 0;
  const finish = (index: number, refit: FamilyFit) => {
    priors[index] = refit.prior;
    done++;
    onProgress(done, replicates);
  };
  const fromHelper = helper
    ?.run(
      {
        kind: "refits",
        matrix,
        grid: fit.grid,
        family: fit.family,
        nullWeight: fit.nullWeight,
        componentWeights: fit.componentWeights,
        resamples,
        next,
      },
      (value) => {
        const { index, fit: refit } = value as RefitProgress;
        finish(index, refit);
      },
    )
    .catch(() => undefined);
  for (;;) {
    const index = Atomics.add(next, 0, 1);
    if (index >= replicates) break;
    finish(index, refitResample(matrix, fit, resamples[index] as Resample));
    // The helper's refits arrive as messages: take them in between.
    await yieldToEventLoop();
  }
  await fromHelper;
  for (let index = 0; index < replicates; index++)
    if (priors[index] === undefined) finish(index, refitResample(matrix, fit, resamples[index] as Resample));
  return priors as EffectPrior[];
}
