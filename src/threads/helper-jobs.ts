/**
 * The jobs the helper thread (helper-thread.ts) runs, and how it runs them. Every job is a pure
 * computation over inputs held in SharedArrayBuffers or copied with the message, so its result is
 * the same whichever thread computes it:
 * - "posteriors": posterior rows, chunk by chunk beside the calling thread (posterior-threads.ts);
 * - "above": P(theta > threshold) rows, chunk by chunk beside the calling thread (posterior-threads.ts);
 * - "sums": program sums under many priors, chunk by chunk beside the calling thread (sums-threads.ts);
 * - "coarse-grid": the grid family's fit on a coarse grid (refit-threads.ts);
 * - "refits": bootstrap refits claimed one at a time from a shared counter (refit-threads.ts).
 */
import { type Resample, refitResample } from "../stats/bootstrap-prior.ts";
import type { EffectPrior, PriorComponent } from "../stats/effect-prior.ts";
import { type FamilyFit, type FitFamily, fitOnMatrix } from "../stats/fit-effect-prior.ts";
import { type LikelihoodMatrix, likelihoodMatrix } from "../stats/likelihood-matrix.ts";
import { emptyPosteriorColumns, writePosteriorRows, writeProbabilityAboveRows } from "../stats/posterior.ts";
import { type PosteriorSums, posteriorSumsUnderPriors } from "../stats/posterior-sums.ts";
import { thetaGridComponents } from "../stats/prior-grid.ts";
import { type SharedChunks, workOnNextChunk } from "./shared-chunks.ts";

export type HelperJob =
  | {
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
  | {
      readonly kind: "above";
      readonly prior: EffectPrior;
      readonly threshold: number;
      /** Over SharedArrayBuffers, as is `out`. */
      readonly y: Float64Array;
      readonly s: Float64Array;
      readonly out: Float64Array;
      readonly chunks: SharedChunks;
    }
  | {
      readonly kind: "sums";
      readonly priors: readonly EffectPrior[];
      readonly thresholds: readonly number[];
      readonly y: Float64Array;
      readonly s: Float64Array;
      /** Over a SharedArrayBuffer: each chunk's sums (sums-threads.ts). */
      readonly partials: Float64Array;
      readonly chunks: SharedChunks;
    }
  | {
      readonly kind: "coarse-grid";
      readonly y: Float64Array;
      readonly s: Float64Array;
      readonly points: number;
      readonly nullWeight: number;
    }
  | {
      readonly kind: "refits";
      /** The fit's likelihood matrix, over SharedArrayBuffers. */
      readonly matrix: LikelihoodMatrix;
      readonly grid: readonly PriorComponent[];
      readonly family: FitFamily;
      readonly nullWeight: number;
      readonly componentWeights: Float64Array;
      readonly resamples: readonly Resample[];
      /** Int32Array(1) over a SharedArrayBuffer: the next resample to claim. */
      readonly next: Int32Array;
    };

/** A refit handed back as soon as it is done. */
export interface RefitProgress {
  readonly index: number;
  readonly fit: FamilyFit;
}

/** Runs a job in the helper; `progress` hands back partial results (refits). */
export function runHelperJob(job: HelperJob, progress: (value: unknown) => void): unknown {
  switch (job.kind) {
    case "posteriors": {
      const columns = emptyPosteriorColumns(job.chunks.rows, job.level, job.columns);
      const write = (from: number, to: number) =>
        writePosteriorRows(job.prior, job.y, job.s, columns, from, to);
      while (workOnNextChunk(job.chunks, write));
      return null;
    }
    case "above": {
      const write = (from: number, to: number) =>
        writeProbabilityAboveRows(job.prior, job.y, job.s, job.threshold, job.out, from, to);
      while (workOnNextChunk(job.chunks, write));
      return null;
    }
    case "sums": {
      const write = (from: number, to: number, chunk: number) =>
        writeChunkSums(job.priors, job.y, job.s, job.thresholds, job.partials, chunk, from, to);
      while (workOnNextChunk(job.chunks, write));
      return null;
    }
    case "coarse-grid": {
      const grid = thetaGridComponents({ y: job.y, s: job.s }, job.points);
      return fitOnMatrix(likelihoodMatrix(job.y, job.s, grid), grid, "grid", job.nullWeight);
    }
    case "refits": {
      const matrix = job.matrix;
      for (;;) {
        const index = Atomics.add(job.next, 0, 1);
        if (index >= job.resamples.length) return null;
        progress({
          index,
          fit: refitResample(matrix, job, job.resamples[index] as Resample),
        } satisfies RefitProgress);
      }
    }
  }
}

/**
 * The chunks' sums in one shared array: per chunk, per prior, `4 + thresholds` figures (mean,
 * P(null), P(theta < 0), P(theta > 0), P(theta > t_j)). Written by writeChunkSums on either thread,
 * added up in chunk order by addChunkSums.
 */
export function chunkSumsStride(thresholdCount: number): number {
  return 4 + thresholdCount;
}

/** The sums of one chunk's results under each prior, into that chunk's slot of `partials`. */
export function writeChunkSums(
  priors: readonly EffectPrior[],
  y: Float64Array,
  s: Float64Array,
  thresholds: readonly number[],
  partials: Float64Array,
  chunk: number,
  from: number,
  to: number,
): void {
  const sums = posteriorSumsUnderPriors(priors, y.subarray(from, to), s.subarray(from, to), thresholds);
  let offset = chunk * priors.length * chunkSumsStride(thresholds.length);
  for (const sum of sums) {
    partials[offset++] = sum.mean;
    partials[offset++] = sum.probNull;
    partials[offset++] = sum.probNegative;
    partials[offset++] = sum.probPositive;
    for (const value of sum.probAbove) partials[offset++] = value;
  }
}

/** Prior b's sums over every chunk, added in chunk order. */
export function addChunkSums(
  partials: Float64Array,
  chunkCount: number,
  priorCount: number,
  thresholdCount: number,
  b: number,
): PosteriorSums {
  const stride = chunkSumsStride(thresholdCount);
  const total = new Float64Array(stride);
  for (let chunk = 0; chunk < chunkCount; chunk++) {
    const offset = (chunk * priorCount + b) * stride;
    for (let f = 0; f < stride; f++) total[f] = (total[f] as number) + (partials[offset + f] as number);
  }
  return {
    mean: total[0] as number,
    probNull: total[1] as number,
    probNegative: total[2] as number,
    probPositive: total[3] as number,
    probAbove: Array.from(total.subarray(4)),
  };
}
