/**
 * posteriorSumsUnderPriors on two threads, synchronously: the calling thread and the helper thread
 * (helper-thread.ts) each sum chunks of the results into their own slot of a shared array, and the
 * chunks' sums are added in chunk order, so the result does not depend on which thread summed
 * which chunk. It is the one-thread result up to the rounding of adding the sums chunk by chunk.
 * For the program review (run-review.ts passes it to programReview).
 */

import type { EffectPrior } from "../stats/effect-prior.ts";
import { type PosteriorSums, posteriorSumsUnderPriors, validateSumsInputs } from "../stats/posterior-sums.ts";
import { addChunkSums, chunkSumsStride, writeChunkSums } from "./helper-jobs.ts";
import { helperThread, sharedFloat64 } from "./helper-thread.ts";
import { createSharedChunks, writeChunksHere } from "./shared-chunks.ts";

/** Below this many results one thread is faster than sharing. */
export const threadedSumsRows = 20_000;

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
  const chunks = createSharedChunks(y.length);
  const chunkCount = chunks.done.length;
  const partials = new Float64Array(
    new SharedArrayBuffer(8 * chunkCount * priors.length * chunkSumsStride(thresholds.length)),
  );
  helperThread()
    ?.run({ kind: "sums", priors, thresholds, y: sharedY, s: sharedS, partials, chunks })
    .catch(() => null);
  writeChunksHere(chunks, (from, to, chunk) =>
    writeChunkSums(priors, sharedY, sharedS, thresholds, partials, chunk, from, to),
  );
  return priors.map((_, b) => addChunkSums(partials, chunkCount, priors.length, thresholds.length, b));
}
