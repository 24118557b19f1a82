/**
 * Program sums on two threads are posteriorSumsUnderPriors' sums (the reference, itself checked
 * against summed posteriorProbabilityColumns in test/stats/posterior-sums.test.ts) up to the
 * rounding of adding them chunk by chunk, and do not depend on which thread summed which chunk.
 * The synchronous posterior columns are posteriorColumns' entry for entry.
 */
import { afterAll, describe, expect, it } from "vitest";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { posteriorColumnNames, posteriorColumns } from "../../src/stats/posterior.ts";
import { type PosteriorSums, posteriorSumsUnderPriors } from "../../src/stats/posterior-sums.ts";
import { createRandom } from "../../src/stats/random.ts";
import { helperThread } from "../../src/threads/helper-thread.ts";
import { posteriorColumnsOnThreadsNow } from "../../src/threads/posterior-threads.ts";
import { posteriorSumsOnThreads, threadedSumsRows } from "../../src/threads/sums-threads.ts";

const weighted = (pairs: [EffectPrior["components"][number]["component"], number][]): EffectPrior => ({
  family: "skewed",
  components: pairs.map(([component, weight]) => ({ component, weight })),
});
const priors: EffectPrior[] = [
  weighted([
    [{ kind: "point", at: 0 }, 0.6],
    [{ kind: "uniform", lower: 0, upper: 0.02 }, 0.25],
    [{ kind: "uniform", lower: -0.03, upper: 0 }, 0.15],
  ]),
  weighted([
    [{ kind: "point", at: 0 }, 0.5],
    [{ kind: "uniform", lower: 0, upper: 0.02 }, 0.3],
    [{ kind: "uniform", lower: 0, upper: 0.05 }, 0.2],
  ]),
  weighted([
    [{ kind: "point", at: 0 }, 0.7],
    [{ kind: "normal", mean: 0, scale: 0.015 }, 0.3],
  ]),
];
const rows = 3 * threadedSumsRows;
const random = createRandom(20261203);
const y = new Float64Array(rows);
const s = new Float64Array(rows);
for (let i = 0; i < rows; i++) {
  s[i] = 0.004 + 0.025 * random.uniform();
  y[i] = (random.uniform() < 0.65 ? 0 : 0.02 * random.normal()) + (s[i] as number) * random.normal();
}
const thresholds = [0, 0.005];
const reference = posteriorSumsUnderPriors(priors, y, s, thresholds);
// Relative rounding of adding ~8 chunk sums of ~8,000 terms each (common practice: a few ulps per addition).
const sumsTolerance = 1e-12;

function expectCloseSums(actual: PosteriorSums[], expected: PosteriorSums[]): void {
  expect(actual.length).toBe(expected.length);
  actual.forEach((sum, b) => {
    const other = expected[b] as PosteriorSums;
    const close = (a: number, e: number): void =>
      expect(Math.abs(a - e)).toBeLessThanOrEqual(sumsTolerance * Math.max(1, Math.abs(e)));
    close(sum.mean, other.mean);
    close(sum.probNull, other.probNull);
    close(sum.probNegative, other.probNegative);
    close(sum.probPositive, other.probPositive);
    for (const [j, value] of sum.probAbove.entries()) close(value, other.probAbove[j] as number);
  });
}

afterAll(async () => {
  await helperThread()?.stop();
});

describe("program sums on two threads", () => {
  it("equal the one-thread sums up to rounding, and repeat exactly", () => {
    helperThread(); // started before, so that it takes chunks
    const first = posteriorSumsOnThreads(priors, y, s, thresholds);
    expectCloseSums(first, reference);
    expect(posteriorSumsOnThreads(priors, y, s, thresholds)).toEqual(first);
  });

  it("give the same sums with threads turned off (PLUMBLINE_THREADS=1)", () => {
    const withHelper = posteriorSumsOnThreads(priors, y, s, thresholds);
    process.env.PLUMBLINE_THREADS = "1";
    try {
      expect(posteriorSumsOnThreads(priors, y, s, thresholds)).toEqual(withHelper);
    } finally {
      delete process.env.PLUMBLINE_THREADS;
    }
  });

  it("check their inputs, naming the entry of the whole batch", () => {
    const bad = Float64Array.from(y);
    bad[45_000] = Number.NaN;
    expect(() => posteriorSumsOnThreads(priors, bad, s, thresholds)).toThrow(StatsInputError);
    expect(() => posteriorSumsOnThreads(priors, bad, s, thresholds)).toThrow(/y\[45000\]/);
  });
});

describe("posterior columns on two threads, synchronously", () => {
  it("equal posteriorColumns entry for entry", () => {
    const columns = posteriorColumnsOnThreadsNow(priors[0] as EffectPrior, y, s, 0.9);
    const expected = posteriorColumns(priors[0] as EffectPrior, y, s, 0.9);
    for (const name of posteriorColumnNames)
      expect(columns[name].every((value, i) => Object.is(value, expected[name][i]))).toBe(true);
  });
});
