/**
 * The helper thread gives the very fits this thread would: the coarse grid fit, and bootstrap
 * refits shared between the threads equal bootstrapPrior's from the same seed (the reference is the
 * single-thread code path, bootstrap-prior.ts, itself checked in the fit tests).
 */
import { afterAll, describe, expect, it } from "vitest";
import { bootstrapPrior } from "../../src/stats/bootstrap-prior.ts";
import { fitEffectPrior, fitOnMatrix, observationColumns } from "../../src/stats/fit-effect-prior.ts";
import { likelihoodMatrix } from "../../src/stats/likelihood-matrix.ts";
import { posteriorColumnCount } from "../../src/stats/posterior.ts";
import { thetaGridComponents } from "../../src/stats/prior-grid.ts";
import { createRandom } from "../../src/stats/random.ts";
import { type HelperThread, helperThread, sharedFloat64 } from "../../src/threads/helper-thread.ts";
import { coarseGridOnHelper, refitsOnThreads } from "../../src/threads/refit-threads.ts";
import { createSharedChunks } from "../../src/threads/shared-chunks.ts";

const random = createRandom(20261208);
const observations = Array.from({ length: 6000 }, () => {
  const s = 0.005 + 0.025 * random.uniform();
  const theta = random.uniform() < 0.7 ? 0 : 0.02 * random.normal();
  return { y: theta + s * random.normal(), s };
});
const columns = observationColumns(observations);
const y = sharedFloat64(columns.y);
const s = sharedFloat64(columns.s);
afterAll(async () => {
  await helperThread()?.stop();
});

describe("fits on the helper thread", () => {
  it("starts", () => {
    expect(helperThread()).not.toBeNull();
  });

  it("fits the coarse grid exactly as this thread does", async () => {
    const fromHelper = await coarseGridOnHelper(helperThread() as HelperThread, y, s, 30, 10);
    const grid = thetaGridComponents(columns, 30);
    const here = fitOnMatrix(likelihoodMatrix(columns.y, columns.s, grid), grid, "grid", 10);
    expect(fromHelper).toEqual(here);
  }, 60_000);

  it("shares bootstrap refits and returns bootstrapPrior's priors for the same seed", async () => {
    const fit = fitEffectPrior(observations, { family: "skewed" });
    const progress: number[] = [];
    const matrix = likelihoodMatrix(y, s, fit.grid, { shared: true });
    const shared = await refitsOnThreads(helperThread(), fit, matrix, 8, 77, (done) => progress.push(done));
    const alone = bootstrapPrior(observations, fit, { replicates: 8, seed: 77 }).priors;
    expect(shared).toEqual(alone);
    expect(progress).toEqual([1, 2, 3, 4, 5, 6, 7, 8]);
  }, 60_000);

  it("falls back to this thread when the helper has stopped", async () => {
    const stopped = helperThread() as HelperThread;
    await stopped.stop();
    const fit = fitEffectPrior(observations, { family: "symmetric" });
    const matrix = likelihoodMatrix(y, s, fit.grid, { shared: true });
    const shared = await refitsOnThreads(stopped, fit, matrix, 4, 5, () => undefined);
    expect(shared).toEqual(bootstrapPrior(observations, fit, { replicates: 4, seed: 5 }).priors);
    await expect(coarseGridOnHelper(stopped, y, s, 30, 10)).rejects.toThrow(/stopped/);
    // The next caller gets a new helper.
    expect(helperThread()).not.toBe(stopped);
  }, 60_000);

  it("reports an error a job throws, and stays up for the next job", async () => {
    const helper = helperThread() as HelperThread;
    const rows = 10;
    const badPrior = {
      family: "symmetric" as const,
      components: [{ component: { kind: "point" as const, at: 0 }, weight: -1 }],
    };
    const job = helper.run({
      kind: "posteriors",
      prior: badPrior,
      level: 0.9,
      y: sharedFloat64(new Float64Array(rows)),
      s: sharedFloat64(new Float64Array(rows).fill(0.01)),
      columns: Array.from({ length: posteriorColumnCount }, () => new SharedArrayBuffer(8 * rows)),
      chunks: createSharedChunks(rows, rows),
    });
    await expect(job).rejects.toThrow(/prior weight/);
    expect(helperThread()).toBe(helper);
    await expect(coarseGridOnHelper(helper, y, s, 30, 10)).resolves.toMatchObject({ family: "grid" });
  }, 60_000);
});
