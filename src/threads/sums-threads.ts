/**
 * posteriorSumsUnderPriors on two threads, synchronously: the calling thread and the helper thread
 * (helper-thread.ts) each sum chunks of the results into their own slot of a shared array, and the
 * chunks' sums are added in chunk order, so the result does not depend on which thread summed
 * which chunk. It is the one-thread result up to the rounding of adding the sums chunk by chunk.
 * For the program review (run-review.ts passes it to programReview).
 */

import type { EffectPrior } from "../stats/effect-prior.ts";
import { type PosteriorSums, posteriorSumsUnderPriors, validateSumsInputs } from "../stats/posterior-sums.ts";
import { writeChunkSums } from "./helper-jobs.ts";
import { helperThread, sharedFloat64 } from "./helper-thread.ts";
import { createSharedChunks, writeChunksHere } from "./shared-chunks.ts";

/** Below this many results one thread is faster than sharing. */
export const threadedSumsRows = 20_000;
const chunkRows = 8192;
/** How long to wait for a chunk the helper holds before summing it here (it takes ~0.1 s). */
const patienceMs = 2000;

export function posteriorSumsOnThreads(
  priors: readonly EffectPrior[],
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  thresholds: readonly number[] = [],
): PosteriorSums[] {
  if (y.length < threadedSumsRows || priors.length === 0)
    return posteriorSumsUnderPriors(priors, y, s, thresholds);
  // Checked once here, so that a message names the entry's index in the whole batch.
  validateSumsInputs(y, s, thresholds);
  const sharedY = sharedFloat64(y);
  const sharedS = sharedFloat64(s);
  const chunks = createSharedChunks(y.length, chunkRows);
  const stride = 4 + thresholds.length;
  const partials = new Float64Array(new SharedArrayBuffer(8 * chunks.done.length * priors.length * stride));
  helperThread()
    ?.run({ kind: "sums", priors, thresholds, y: sharedY, s: sharedS, partials, chunks })
    .catch(() => null);
  writeChunksHere(
    chunks,
    (from, to) =>
      writeChunkSums(priors, sharedY, sharedS, thresholds, partials, Math.floor(from / chunkRows), from, to),
    patienceMs,
  );
  return priors.map((_, b) => {
    const total = new Float64Array(stride);
    for (let chunk = 0; chunk < chunks.done.length; chunk++) {
      const offset = (chunk * priors.length + b) * stride;
      for (let f = 0; f < stride; f++) total[f] = (total[f] as number) + (partials[offset + f] as number);
    }
    return {
      mean: total[0] as number,
      probNull: total[1] as number,
      probNegative: total[2] as number,
      probPositive: total[3] as number,
      probAbove: Array.from(total.subarray(4)),
    };
  });
}
