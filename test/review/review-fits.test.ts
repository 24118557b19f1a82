/**
 * The review's fits of a large history (above largeHistoryTests, where the helper thread takes
 * the coarse grid fit and a share of the refits, and the chosen family's matrix is shared) are
 * the fits of the one-thread reference path: fitEffectPrior for each family, bootstrapPrior for the
 * refits from the same seed, and the grid family fitted on largeHistoryGridPoints points.
 */
import { afterAll, describe, expect, it } from "vitest";
import { fitReviewPriors, largeHistoryGridPoints, largeHistoryTests } from "../../src/review/review-fits.ts";
import { bootstrapPrior } from "../../src/stats/bootstrap-prior.ts";
import { fitEffectPrior, fitOnMatrix, observationColumns } from "../../src/stats/fit-effect-prior.ts";
import { likelihoodMatrix } from "../../src/stats/likelihood-matrix.ts";
import { thetaGridComponents } from "../../src/stats/prior-grid.ts";
import { createRandom } from "../../src/stats/random.ts";
import { helperThread } from "../../src/threads/helper-thread.ts";

const random = createRandom(20261204);
const observations = Array.from({ length: largeHistoryTests + 2000 }, () => {
  const s = 0.005 + 0.025 * random.uniform();
  const theta = random.uniform() < 0.7 ? 0 : 0.02 * random.uniform() - 0.005;
  return { y: theta + s * random.normal(), s };
});

afterAll(async () => {
  await helperThread()?.stop();
});

describe("fits of a large history for the review", () => {
  it("equal the one-thread fits, refits and coarse grid", async () => {
    const seed = 3;
    const fits = await fitReviewPriors(
      observations,
      { nullWeight: null, priorFamily: "auto", bootstrap: 6, bootstrapAsked: true, seed },
      () => undefined,
    );
    const symmetric = fitEffectPrior(observations, { family: "symmetric" });
    const skewed = fitEffectPrior(observations, { family: "skewed" });
    const chosen = skewed.logLik > symmetric.logLik ? skewed : symmetric;
    const { alternatives, ...fit } = fits.fit;
    expect(fit).toEqual(chosen);
    expect(fits.alternatives.slice(0, 2)).toEqual([symmetric, skewed]);
    const data = observationColumns(observations);
    const grid = thetaGridComponents(data, largeHistoryGridPoints);
    expect(fits.alternatives[2]).toEqual(
      fitOnMatrix(likelihoodMatrix(data.y, data.s, grid), grid, "grid", chosen.nullWeight),
    );
    expect(alternatives).toEqual(fits.alternatives);
    // The review draws its refits from seed + 7919 (run-review.ts keeps the streams apart).
    expect(fits.bootstrapPriors).toEqual(
      bootstrapPrior(observations, chosen, { replicates: 6, seed: seed + 7919 }).priors,
    );
    expect(fits.gridRowCoarse).toBe(true);
    expect(fits.lowered).toBe(false);
  }, 120_000);

  it("below the helper's size, the refits (which pause for polls) are bootstrapPrior's", async () => {
    const small = observations.slice(0, 3000);
    const seed = 5;
    const progress: string[] = [];
    const fits = await fitReviewPriors(
      small,
      { nullWeight: null, priorFamily: "symmetric", bootstrap: 25, bootstrapAsked: true, seed },
      (message) => progress.push(message),
    );
    const chosen = fitEffectPrior(small, { family: "symmetric" });
    expect(fits.bootstrapPriors).toEqual(
      bootstrapPrior(small, chosen, { replicates: 25, seed: seed + 7919 }).priors,
    );
    expect(progress).toContain("bootstrap refit 20 of 25");
    expect(progress.at(-1)).toBe("bootstrap refit 25 of 25");
  }, 120_000);
});
