import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { findIncreasingRoot, findRoot } from "../../src/stats/find-root.ts";
import {
  meanMinimumDetectableEffect,
  proportionMinimumDetectableEffect,
} from "../../src/stats/minimum-detectable-effect.ts";
import { planPower, planSampleSize } from "../../src/stats/sample-size-plan.ts";
import {
  cohensH,
  cohensHSampleSize,
  twoProportionPower,
  twoProportionSampleSize,
} from "../../src/stats/sample-size-proportions.ts";
import {
  type Sidedness,
  type TailConvention,
  twoSampleTPower,
  twoSampleTSampleSize,
} from "../../src/stats/sample-size-t.ts";
import { readCalculatorFixture } from "./fixture.ts";
import { expectClose } from "./tolerance.ts";

interface Conventions {
  readonly alpha: number;
  readonly sides: Sidedness;
  readonly convention: TailConvention;
}
interface TPowerCase extends Conventions {
  readonly n: number;
  readonly delta: number;
  readonly sd: number;
  readonly power: number;
}
interface TSizeCase extends Conventions {
  readonly power: number;
  readonly delta: number;
  readonly sd: number;
  readonly n: number;
}
interface PropPowerCase extends Conventions {
  readonly n: number;
  readonly p1: number;
  readonly p2: number;
  readonly power: number;
}
interface PropSizeCase extends Conventions {
  readonly power: number;
  readonly p1: number;
  readonly p2: number;
  readonly n: number;
}

// The noncentral t is good to ~1e-12 absolute (AS 243's error bound).
const tPowerTolerance = { absolute: 5e-12 };
// At power 0.99 the power curve is flat in n, so n inherits the power error magnified.
const tSampleSizeTolerance = { relative: 1e-9 };
const proportionPowerTolerance = { relative: 1e-13, absolute: 1e-15 };
const proportionSampleSizeTolerance = { relative: 1e-11 };
const documentedExampleTolerance = { absolute: 5e-8 };

const tFixture = readCalculatorFixture<never>("power-t-test").cases as unknown as {
  power: TPowerCase[];
  sampleSize: TSizeCase[];
};
const propFixture = readCalculatorFixture<never>("power-prop-test").cases as unknown as {
  power: PropPowerCase[];
  sampleSize: PropSizeCase[];
};

const unequalFixture = readCalculatorFixture<never>("unequal-allocation-t").cases as unknown as {
  power: {
    n: number;
    delta: number;
    sd: number;
    ratio: number;
    alpha: number;
    twoSidedStrict: number;
    oneSided: number;
  }[];
  sampleSize: { power: number; delta: number; sd: number; ratio: number; alpha: number; n: number }[];
};

describe("two-sample t (R power.t.test)", () => {
  it("R's documented examples", () => {
    // ?power.t.test: power.t.test(n = 20, delta = 1) -> power 0.8689528;
    // power.t.test(power = .90, delta = 1) -> n = 22.02110.
    expectClose(
      "power",
      { n: 20, delta: 1 },
      twoSampleTPower({ n: 20, delta: 1, sd: 1 }),
      0.8689528,
      documentedExampleTolerance,
    );
    expectClose(
      "n",
      { power: 0.9, delta: 1 },
      twoSampleTSampleSize({ power: 0.9, delta: 1, sd: 1 }),
      22.0211,
      { absolute: 5e-6 },
    );
  });
  it("matches the fixture, both conventions and sidedness", () => {
    for (const example of tFixture.power) {
      expectClose("power.t.test power", example, twoSampleTPower(example), example.power, tPowerTolerance);
    }
    for (const example of tFixture.sampleSize) {
      expectClose("power.t.test n", example, twoSampleTSampleSize(example), example.n, tSampleSizeTolerance);
    }
  });
  it("Cohen (1988): d = 0.2 / 0.5 / 0.8 need 393 / 64 / 26 per group at power 0.8", () => {
    // Cohen (1988), Statistical Power Analysis for the Behavioral Sciences, Table 2.4.1
    // (alpha 0.05 two-sided). Cohen rounds; the exact sizes are 393.4, 63.8 and 25.5.
    for (const [d, tabled] of [
      [0.2, 393],
      [0.5, 64],
      [0.8, 26],
    ] as const) {
      const n = twoSampleTSampleSize({ power: 0.8, delta: d, sd: 1 });
      expectClose("n per group (Cohen's rounding)", { d }, n, tabled, { absolute: 0.5 });
    }
  });
  it("unequal allocation matches statsmodels TTestIndPower (fixture from generate.py)", () => {
    // statsmodels' two-sided power counts both tails (our "strict"); its noncentral t is Boost's
    // (scipy 1.10), which differs from AS 243 / R by up to ~1e-9, and solve_power stops at a
    // looser tolerance than ours, hence these tolerances.
    const statsmodelsPowerTolerance = { absolute: 2e-9 };
    const statsmodelsSampleSizeTolerance = { relative: 2e-7 };
    for (const example of unequalFixture.power) {
      const design = {
        n: example.n,
        delta: example.delta,
        sd: example.sd,
        ratio: example.ratio,
        alpha: example.alpha,
      };
      expectClose(
        "TTestIndPower two-sided",
        design,
        twoSampleTPower({ ...design, convention: "strict" }),
        example.twoSidedStrict,
        statsmodelsPowerTolerance,
      );
      expectClose(
        "TTestIndPower larger",
        design,
        twoSampleTPower({ ...design, sides: "oneSided" }),
        example.oneSided,
        statsmodelsPowerTolerance,
      );
    }
    for (const example of unequalFixture.sampleSize) {
      const design = {
        power: example.power,
        delta: example.delta,
        sd: example.sd,
        ratio: example.ratio,
        alpha: example.alpha,
      };
      expectClose(
        "TTestIndPower solve_power nobs1",
        design,
        twoSampleTSampleSize({ ...design, convention: "strict" }),
        example.n,
        statsmodelsSampleSizeTolerance,
      );
    }
  });
  it("unequal allocation: ratio 1 is R; a 2:1 split needs fewer control units than 1:1 but more in total", () => {
    const equal = twoSampleTSampleSize({ power: 0.8, delta: 0.5, sd: 1 });
    const unequal = twoSampleTSampleSize({ power: 0.8, delta: 0.5, sd: 1, ratio: 2 });
    expect(unequal).toBeLessThan(equal);
    expect(unequal * 3).toBeGreaterThan(equal * 2);
    // Normal approximation check: total variance factor (1 + 1/ratio) over 2, so n1 ~ 0.75 n.
    expectClose("n1 at ratio 2 vs 0.75 n at ratio 1", {}, unequal, 0.75 * equal, { relative: 0.01 });
  });
  it("rejects n < 2, a non-positive sd and power <= alpha", () => {
    expect(() => twoSampleTPower({ n: 1, delta: 1, sd: 1 })).toThrow(/n must be at least 2/);
    expect(() => twoSampleTPower({ n: 10, delta: 1, sd: 0 })).toThrow(StatsInputError);
    expect(() => twoSampleTSampleSize({ power: 0.01, delta: 1, sd: 1, convention: "strict" })).toThrow(
      /power must be above/,
    );
  });
});

describe("two proportions (R power.prop.test)", () => {
  it("R's documented example: n = 50, p1 = .5, p2 = .75 -> power 0.7401659", () => {
    expectClose(
      "power",
      { n: 50 },
      twoProportionPower({ n: 50, p1: 0.5, p2: 0.75 }),
      0.7401659,
      documentedExampleTolerance,
    );
  });
  it("matches the fixture, both conventions and sidedness", () => {
    for (const example of propFixture.power) {
      expectClose(
        "power.prop.test power",
        example,
        twoProportionPower(example),
        example.power,
        proportionPowerTolerance,
      );
    }
    for (const example of propFixture.sampleSize) {
      expectClose(
        "power.prop.test n",
        example,
        twoProportionSampleSize(example),
        example.n,
        proportionSampleSizeTolerance,
      );
    }
  });
  it("Cohen's h as a named alternative (Cohen 1988, ch. 6)", () => {
    // h = 2 asin sqrt(.75) - 2 asin sqrt(.5) = 2 pi/3 - pi/2 = pi/6 exactly.
    expectClose("Cohen's h", { p1: 0.5, p2: 0.75 }, cohensH(0.5, 0.75), Math.PI / 6, { relative: 1e-15 });
    const byH = cohensHSampleSize({ p1: 0.5, p2: 0.75, power: 0.9 });
    const byR = twoProportionSampleSize({ p1: 0.5, p2: 0.75, power: 0.9 });
    // Both are normal approximations; they agree within a unit here.
    expectClose("n by Cohen's h vs R formula", {}, byH, byR, { absolute: 1 });
    // Cohen (1988) Table 6.4.1, h = 0.2, power 0.8, alpha 0.05 two-sided: n = 392 per group
    // (value from memory of the table; exact 392.4).
    const p2 = Math.sin(Math.asin(Math.sqrt(0.5)) + 0.1) ** 2;
    const n = cohensHSampleSize({ p1: 0.5, p2, power: 0.8 });
    expectClose("n per group by Cohen's h (Table 6.4.1)", { h: 0.2 }, n, 392, { absolute: 0.5 });
  });
  it("variance reduction multiplies n by (1 - rho^2) (Deng, Xu, Kohavi & Walker 2013)", () => {
    const plain = twoProportionSampleSize({ p1: 0.05, p2: 0.055, power: 0.8 });
    const reduced = twoProportionSampleSize({
      p1: 0.05,
      p2: 0.055,
      power: 0.8,
      varianceFactor: 1 - 0.5 ** 2,
    });
    expectClose("n with rho 0.5", {}, reduced, plain * 0.75, { relative: 1e-10 });
  });
  it("rejects a baseline outside (0, 1)", () => {
    expect(() => twoProportionPower({ n: 10, p1: 1.2, p2: 0.5 })).toThrow(
      /p1 must be strictly between 0 and 1/,
    );
  });
});

describe("minimum detectable effect", () => {
  it("reads R's power.prop.test example backwards", () => {
    const mde = proportionMinimumDetectableEffect({ baseline: 0.5, n: 50, power: 0.7401659013313878 });
    expectClose("absolute MDE", { baseline: 0.5, n: 50 }, mde.absolute, 0.25, { relative: 1e-10 });
    expectClose("relative MDE", { baseline: 0.5, n: 50 }, mde.relative as number, 0.5, { relative: 1e-10 });
  });
  it("reads R's power.t.test example backwards", () => {
    const mde = meanMinimumDetectableEffect({ sd: 1, n: 20, power: 0.8689528016924959, mean: 4 });
    expectClose("absolute MDE", { n: 20 }, mde.absolute, 1, { relative: 1e-9 });
    expectClose("relative MDE", { n: 20, mean: 4 }, mde.relative as number, 0.25, { relative: 1e-9 });
  });
});

describe("planSampleSize", () => {
  it("Cohen (1988): d = 0.5 -> 64 per arm, 128 in total", () => {
    const plan = planSampleSize({ metric: { kind: "mean", sd: 1, delta: 0.5 }, power: 0.8 });
    expect(plan.nPerArm).toBe(64);
    expect(plan.totalN).toBe(128);
  });
  it("relative MDE on a baseline rate, k arms with Bonferroni, variance reduction and run length", () => {
    const plan = planSampleSize({
      metric: { kind: "proportion", baseline: 0.05, relativeEffect: 0.1 },
      power: 0.8,
      arms: 3,
      covariateCorrelation: 0.5,
      dailyTraffic: 20000,
    });
    expect(plan.alphaPerComparison).toBe(0.025);
    const direct = twoProportionSampleSize({
      p1: 0.05,
      p2: 0.055,
      power: 0.8,
      alpha: 0.025,
      varianceFactor: 0.75,
    });
    expect(plan.nPerArm).toBe(Math.ceil(direct));
    expect(plan.totalN).toBe(3 * plan.nPerArm);
    expect(plan.days).toBe(Math.ceil(plan.totalN / 20000));
    const uncorrected = planSampleSize({
      metric: { kind: "proportion", baseline: 0.05, relativeEffect: 0.1 },
      arms: 3,
      correction: "none",
    });
    expect(uncorrected.alphaPerComparison).toBe(0.05);
    expect(uncorrected.nPerArm).toBeLessThan(plan.nPerArm / 0.75);
  });
  it("power of a given size inverts the sample size", () => {
    const plan = planPower({ metric: { kind: "proportion", baseline: 0.5, absoluteEffect: 0.25 }, n: 50 });
    expectClose("power", { n: 50 }, plan.power, 0.7401659, documentedExampleTolerance);
  });
  it("rejects bad plans with typed errors", () => {
    expect(() =>
      planSampleSize({ metric: { kind: "proportion", baseline: 0, relativeEffect: 0.1 } }),
    ).toThrow(/baseline/);
    expect(() => planSampleSize({ metric: { kind: "mean", sd: 1, delta: 0.5 }, power: 0.04 })).toThrow(
      /power must be above alpha/,
    );
    expect(() => planSampleSize({ metric: { kind: "mean", sd: 1, delta: 0.5 }, arms: 1 })).toThrow(/arms/);
    expect(() => planPower({ metric: { kind: "mean", sd: 1, delta: 0.5 }, n: 1 })).toThrow(
      /n must be at least 2/,
    );
  });
});

describe("properties (fast-check)", () => {
  it("power is a probability and rises with the effect, with n and with alpha", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 2, max: 5000, noNaN: true }),
        fc.double({ min: 0.01, max: 2, noNaN: true }),
        fc.double({ min: 0.001, max: 0.2, noNaN: true }),
        fc.constantFrom<TailConvention>("upperTail", "strict"),
        (n, delta, alpha, convention) => {
          const base = twoSampleTPower({ n, delta, sd: 1, alpha, convention });
          expect(base).toBeGreaterThanOrEqual(0);
          expect(base).toBeLessThanOrEqual(1);
          fc.pre(base < 1 - 1e-9);
          expect(twoSampleTPower({ n, delta: delta * 1.1, sd: 1, alpha, convention })).toBeGreaterThan(base);
          expect(twoSampleTPower({ n: n * 1.1, delta, sd: 1, alpha, convention })).toBeGreaterThan(base);
          expect(twoSampleTPower({ n, delta, sd: 1, alpha: alpha * 1.1, convention })).toBeGreaterThan(base);
        },
      ),
      { numRuns: 60 },
    );
  });
  it("proportion power is monotone in n; sample size inverts power", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.01, max: 0.9, noNaN: true }),
        fc.double({ min: 0.02, max: 0.5, noNaN: true }),
        fc.double({ min: 0.5, max: 0.95, noNaN: true }),
        (p1, lift, power) => {
          const p2 = p1 * (1 + lift);
          fc.pre(p2 < 0.99);
          const n = twoProportionSampleSize({ p1, p2, power });
          fc.pre(n > 2);
          expectClose("power at solved n", { p1, p2, power }, twoProportionPower({ p1, p2, n }), power, {
            absolute: 1e-10,
          });
          expect(twoProportionPower({ p1, p2, n: n * 1.2 })).toBeGreaterThan(power);
        },
      ),
      { numRuns: 60 },
    );
  });
});

describe("findRoot (Brent 1973)", () => {
  it("finds sqrt 2 and reports a missing bracket as NaN", () => {
    expectClose(
      "sqrt 2",
      {},
      findRoot((x) => x * x - 2, 0, 2),
      Math.SQRT2,
      { relative: 1e-14 },
    );
    expect(findRoot((x) => x * x + 1, 0, 2)).toBeNaN();
  });
  it("findIncreasingRoot grows its bracket over orders of magnitude, and says NaN past the limit", () => {
    expectClose(
      "root at 1e9",
      {},
      findIncreasingRoot((n) => Math.log(n / 1e9), 2, 1e12),
      1e9,
      {
        relative: 1e-12,
      },
    );
    expect(findIncreasingRoot((n) => n - 1, 2, 1e12)).toBe(2);
    expect(findIncreasingRoot(() => -1, 2, 1e6)).toBeNaN();
  });
  it("a small treatment share (ratio 0.01) still solves, near the normal-approximation size", () => {
    // Same variance of the difference, sd^2 (1/n + 1/(ratio n)) = 2 sd^2 / n_equal, gives
    // n = n_equal (1 + 1/ratio) / 2 (normal approximation, common practice); 2 % for the t's df.
    const equal = twoSampleTSampleSize({ delta: 0.5, sd: 1, power: 0.8 });
    const skewed = twoSampleTSampleSize({ delta: 0.5, sd: 1, power: 0.8, ratio: 0.01 });
    expectClose("control size at ratio 0.01", {}, skewed, (equal * (1 + 1 / 0.01)) / 2, { relative: 0.02 });
  });
});
