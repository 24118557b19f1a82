/**
 * The second thread of a large review gives the very fits the main thread would: the coarse grid
 * fit, and bootstrap refits shared between the threads equal bootstrapPrior's from the same seed
 * (the reference is the single-thread code path, bootstrap-prior.ts, itself checked in the fit tests).
 */
import { afterAll, describe, expect, it } from "vitest";
import { PriorWorker, refitsSharedWithWorker } from "../../src/review/prior-worker-pool.ts";
import { bootstrapPrior } from "../../src/stats/bootstrap-prior.ts";
import { fitEffectPrior, fitOnMatrix, observationColumns } from "../../src/stats/fit-effect-prior.ts";
import { likelihoodMatrix } from "../../src/stats/likelihood-matrix.ts";
import { thetaGridComponents } from "../../src/stats/prior-grid.ts";
import { createRandom } from "../../src/stats/random.ts";

const random = createRandom(20261208);
const observations = Array.from({ length: 6000 }, () => {
  const s = 0.005 + 0.025 * random.uniform();
  const theta = random.uniform() < 0.7 ? 0 : 0.02 * random.normal();
  return { y: theta + s * random.normal(), s };
});
const columns = observationColumns(observations);
const worker = PriorWorker.start(columns.y, columns.s);
afterAll(() => worker?.close());

describe("prior worker", () => {
  it("starts", () => {
    expect(worker).not.toBeNull();
  });

  it("fits the coarse grid exactly as this thread does", async () => {
    const fromWorker = await (worker as PriorWorker).fitCoarseGrid(30, 10);
    const grid = thetaGridComponents(columns, 30);
    const here = fitOnMatrix(likelihoodMatrix(columns.y, columns.s, grid), grid, "grid", 10);
    expect(fromWorker).toEqual(here);
  }, 60_000);

  it("shares bootstrap refits and returns bootstrapPrior's priors for the same seed", async () => {
    const fit = fitEffectPrior(observations, { family: "skewed" });
    const progress: number[] = [];
    const shared = await refitsSharedWithWorker(
      worker as PriorWorker,
      columns.y,
      columns.s,
      fit,
      8,
      77,
      (done) => progress.push(done),
    );
    const alone = bootstrapPrior(observations, fit, { replicates: 8, seed: 77 }).priors;
    expect(shared).toEqual(alone);
    expect(progress).toEqual([1, 2, 3, 4, 5, 6, 7, 8]);
  }, 60_000);

  it("falls back to this thread when the worker has stopped", async () => {
    const stopped = PriorWorker.start(columns.y, columns.s) as PriorWorker;
    stopped.close();
    await new Promise((resolve) => setTimeout(resolve, 200));
    const fit = fitEffectPrior(observations, { family: "symmetric" });
    const shared = await refitsSharedWithWorker(stopped, columns.y, columns.s, fit, 4, 5, () => undefined);
    expect(shared).toEqual(bootstrapPrior(observations, fit, { replicates: 4, seed: 5 }).priors);
    await expect(stopped.fitCoarseGrid(30, 10)).rejects.toThrow(/stopped/);
  }, 60_000);
});
