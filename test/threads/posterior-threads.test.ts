/**
 * Posteriors written on two threads are the very numbers posteriorColumns writes on one (the
 * reference is the single-thread code path, itself checked against scipy and R in
 * test/stats/posterior.test.ts): every entry of every column is compared with Object.is.
 */
import { afterAll, describe, expect, it } from "vitest";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import {
  type PosteriorColumns,
  posteriorColumnNames,
  posteriorColumns,
  posteriorProbabilityAboveColumn,
} from "../../src/stats/posterior.ts";
import { createRandom } from "../../src/stats/random.ts";
import { helperThread } from "../../src/threads/helper-thread.ts";
import {
  posteriorColumnsOnThreads,
  probabilityAboveOnThreadsNow,
  threadedPosteriorRows,
} from "../../src/threads/posterior-threads.ts";

// Every kind of component the posteriors handle: atom, normals, uniforms, half-normal.
const prior: EffectPrior = {
  family: "skewed",
  components: [
    { component: { kind: "point", at: 0 }, weight: 0.55 },
    { component: { kind: "normal", mean: 0, scale: 0.01 }, weight: 0.15 },
    { component: { kind: "normal", mean: 0.004, scale: 0.03 }, weight: 0.1 },
    { component: { kind: "uniform", lower: 0, upper: 0.02 }, weight: 0.1 },
    { component: { kind: "uniform", lower: -0.05, upper: 0 }, weight: 0.05 },
    { component: { kind: "halfNormal", sign: 1, scale: 0.02 }, weight: 0.05 },
  ],
};

const rows = 3 * threadedPosteriorRows;
const random = createRandom(20261202);
const y = new Float64Array(rows);
const s = new Float64Array(rows);
for (let i = 0; i < rows; i++) {
  s[i] = 0.003 + 0.03 * random.uniform();
  y[i] = (random.uniform() < 0.6 ? 0 : 0.02 * random.normal()) + (s[i] as number) * random.normal();
}
const reference = posteriorColumns(prior, y, s, 0.9);

function differingEntries(a: PosteriorColumns, b: PosteriorColumns): number {
  let differing = 0;
  for (const name of posteriorColumnNames)
    for (let i = 0; i < rows; i++) if (!Object.is(a[name][i], b[name][i])) differing++;
  return differing;
}

afterAll(async () => {
  await helperThread()?.stop();
});

describe("posteriors on two threads", () => {
  it("equal posteriorColumns entry for entry, with the helper writing a share", async () => {
    // Started and given a first job before this one, so that it is up and takes a share.
    await posteriorColumnsOnThreads(
      prior,
      y.subarray(0, threadedPosteriorRows),
      s.subarray(0, threadedPosteriorRows),
      0.9,
    );
    let share = { chunks: 0, byHelper: 0 };
    const columns = await posteriorColumnsOnThreads(prior, y, s, 0.9, {
      onShare: (value) => (share = value),
    });
    expect(differingEntries(columns, reference)).toBe(0);
    expect(columns.level).toBe(0.9);
    expect(share.chunks).toBeGreaterThan(10);
    expect(share.byHelper).toBeGreaterThan(0);
  });

  it("finishes on this thread what a helper stopped mid-job left unwritten", async () => {
    const helper = helperThread();
    expect(helper).not.toBeNull();
    const job = posteriorColumnsOnThreads(prior, y, s, 0.9);
    setTimeout(() => void helper?.stop(), 5);
    expect(differingEntries(await job, reference)).toBe(0);
    // The next job gets a new helper.
    const next = helperThread();
    expect(next).not.toBeNull();
    expect(next).not.toBe(helper);
  });

  it("computes everything here when threads are turned off (PLUMBLINE_THREADS=1)", async () => {
    process.env.PLUMBLINE_THREADS = "1";
    try {
      let share = { chunks: 0, byHelper: -1 };
      const columns = await posteriorColumnsOnThreads(prior, y, s, 0.9, {
        onShare: (value) => (share = value),
      });
      expect(differingEntries(columns, reference)).toBe(0);
      expect(share.byHelper).toBe(0);
    } finally {
      delete process.env.PLUMBLINE_THREADS;
    }
  });

  it("checks its inputs like posteriorColumns, naming the entry", async () => {
    const bad = Float64Array.from(s);
    bad[70_001] = -1;
    await expect(posteriorColumnsOnThreads(prior, y, bad, 0.9)).rejects.toThrow(StatsInputError);
    await expect(posteriorColumnsOnThreads(prior, y, bad, 0.9)).rejects.toThrow(/s\[70001\]/);
    await expect(posteriorColumnsOnThreads(prior, y, s, 1.5)).rejects.toThrow(/level/);
  });

  it("writes P(theta > threshold) on two threads as the one-thread column does", async () => {
    // The helper is up from the tests above, so it takes a share.
    const threshold = 0.004;
    const expected = posteriorProbabilityAboveColumn(prior, y, s, threshold);
    const actual = probabilityAboveOnThreadsNow(prior, y, s, threshold);
    let differing = 0;
    for (let i = 0; i < rows; i++) if (!Object.is(actual[i], expected[i])) differing++;
    expect(differing).toBe(0);
    const bad = Float64Array.from(s);
    bad[70_001] = -1;
    expect(() => probabilityAboveOnThreadsNow(prior, y, bad, threshold)).toThrow(/s\[70001\]/);
  });
});
