import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  chiSquareSurvival,
  noncentralTCdf,
  noncentralTSurvival,
  normalCdf,
  normalCdfAndDensity,
  normalLogCdf,
  normalQuantile,
  normalSurvival,
  studentTCdf,
  studentTQuantile,
  studentTSurvival,
} from "../../src/stats/distributions.ts";
import { readCalculatorFixture } from "./fixture.ts";
import { expectClose, type Tolerance } from "./tolerance.ts";

interface NormalFixture {
  readonly cdf: { x: number; cdf: number; survival: number; logCdf: number }[];
  readonly quantile: { p: number; quantile: number }[];
}
interface StudentFixture {
  readonly cdf: { x: number; df: number; cdf: number; survival: number }[];
  readonly quantile: { p: number; df: number; quantile: number }[];
  readonly noncentralCdf: { x: number; df: number; ncp: number; cdf: number; survival: number }[];
  readonly chiSquareSurvival: { x: number; df: number; survival: number }[];
}

// Reference values: R pnorm/qnorm/pt/qt/pchisq, fixtures written by generate.R.
const normal = readCalculatorFixture<NormalFixture>("normal").cases as unknown as NormalFixture;
const student = readCalculatorFixture<StudentFixture>("student-t").cases as unknown as StudentFixture;

// Cody's approximation is good to a few ulps; R returns 0 below -37.5 where the true value is
// subnormal, hence the absolute floor.
const normalCdfTolerance: Tolerance = { relative: 1e-14, absolute: 1e-300 };
const normalLogCdfTolerance: Tolerance = { relative: 1e-14, absolute: 1e-300 };
const normalQuantileTolerance: Tolerance = { relative: 1e-15, absolute: 1e-300 };
const chiSquareSurvivalTolerance: Tolerance = { relative: 1e-13 };
/**
 * Student t cdf and quantile: ~1e-15 relative, a few ulps more in tails below 1e-100 (they come
 * from exp of a large logarithm).
 */
function studentTolerance(_df: number): Tolerance {
  return { relative: 2e-13, absolute: 1e-300 };
}
// AS 243 stops at an error bound of 1e-12, and R's own values carry that error (R warns that
// full precision may not have been achieved for some of them), so the check is absolute.
const noncentralTTolerance: Tolerance = { absolute: 5e-11 };

describe("normal distribution (Cody 1993; Wichura 1988 AS 241) against R", () => {
  it("cdf, upper tail and log cdf", () => {
    for (const example of normal.cdf) {
      expectClose("normalCdf", { x: example.x }, normalCdf(example.x), example.cdf, normalCdfTolerance);
      expectClose(
        "normalSurvival",
        { x: example.x },
        normalSurvival(example.x),
        example.survival,
        normalCdfTolerance,
      );
      expectClose(
        "normalLogCdf",
        { x: example.x },
        normalLogCdf(example.x),
        example.logCdf,
        normalLogCdfTolerance,
      );
    }
  });
  it("cdf with density: the cdf of normalCdf and the density phi(x) from one exp", () => {
    const pair = new Float64Array(2);
    for (const example of normal.cdf) {
      normalCdfAndDensity(example.x, pair);
      expectClose(
        "normalCdfAndDensity cdf",
        { x: example.x },
        pair[0] as number,
        example.cdf,
        normalCdfTolerance,
      );
      // phi(x) = exp(-x^2/2) / sqrt(2 pi), the definition; relative 1e-14 allows the split exp's rounding.
      const density = Math.exp(-0.5 * example.x * example.x) / Math.sqrt(2 * Math.PI);
      expectClose("normalCdfAndDensity density", { x: example.x }, pair[1] as number, density, {
        relative: 1e-14,
        absolute: 1e-300,
      });
    }
  });
  it("log cdf stays finite far in the lower tail, where the cdf underflows", () => {
    // Mills ratio: log Phi(x) ~ -x^2/2 - log(-x) - log sqrt(2 pi) (Abramowitz & Stegun 26.2.12).
    const x = -1e10;
    const asymptotic = -0.5 * x * x - Math.log(-x) - 0.9189385332046728;
    expectClose("normalLogCdf", { x }, normalLogCdf(x), asymptotic, { relative: 1e-15 });
  });
  it("quantile", () => {
    for (const example of normal.quantile) {
      expectClose(
        "normalQuantile",
        { p: example.p },
        normalQuantile(example.p),
        example.quantile,
        normalQuantileTolerance,
      );
    }
  });
});

describe("Student t against R", () => {
  it("cdf and upper tail", () => {
    for (const example of student.cdf) {
      const inputs = { x: example.x, df: example.df };
      const tolerance = studentTolerance(example.df);
      expectClose("studentTCdf", inputs, studentTCdf(example.x, example.df), example.cdf, tolerance);
      expectClose(
        "studentTSurvival",
        inputs,
        studentTSurvival(example.x, example.df),
        example.survival,
        tolerance,
      );
    }
  });
  it("quantile", () => {
    for (const example of student.quantile) {
      const inputs = { p: example.p, df: example.df };
      const actual = studentTQuantile(example.p, example.df);
      expectClose("studentTQuantile", inputs, actual, example.quantile, studentTolerance(example.df));
    }
  });
  it("noncentral cdf and upper tail (Lenth 1989 AS 243)", () => {
    for (const example of student.noncentralCdf) {
      const inputs = { x: example.x, df: example.df, ncp: example.ncp };
      const cdf = noncentralTCdf(example.x, example.df, example.ncp);
      const survival = noncentralTSurvival(example.x, example.df, example.ncp);
      expectClose("noncentralTCdf", inputs, cdf, example.cdf, noncentralTTolerance);
      expectClose("noncentralTSurvival", inputs, survival, example.survival, noncentralTTolerance);
    }
  });
  it("chi-square upper tail", () => {
    for (const example of student.chiSquareSurvival) {
      const inputs = { x: example.x, df: example.df };
      expectClose(
        "chiSquareSurvival",
        inputs,
        chiSquareSurvival(example.x, example.df),
        example.survival,
        chiSquareSurvivalTolerance,
      );
    }
  });
});

describe("distribution properties", () => {
  it("cdfs are probabilities and monotone in x", () => {
    fc.assert(
      fc.property(
        fc.double({ min: -50, max: 50, noNaN: true }),
        fc.double({ min: 0, max: 5, noNaN: true }),
        fc.double({ min: 1, max: 1e4, noNaN: true }),
        fc.double({ min: -10, max: 10, noNaN: true }),
        (x, step, df, ncp) => {
          for (const [low, high] of [
            [normalCdf(x), normalCdf(x + step)],
            [studentTCdf(x, df), studentTCdf(x + step, df)],
            [noncentralTCdf(x, df, ncp), noncentralTCdf(x + step, df, ncp)],
          ] as const) {
            expect(low).toBeGreaterThanOrEqual(0);
            expect(high).toBeLessThanOrEqual(1);
            expect(high).toBeGreaterThanOrEqual(low - 1e-12);
          }
        },
      ),
    );
  });
  it("quantiles invert the cdfs", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 1e-10, max: 1 - 1e-10, noNaN: true }),
        fc.double({ min: 1, max: 1e4, noNaN: true }),
        (p, df) => {
          expectClose("normalCdf(normalQuantile(p))", { p }, normalCdf(normalQuantile(p)), p, {
            relative: 1e-13,
          });
          expectClose(
            "studentTCdf(studentTQuantile(p))",
            { p, df },
            studentTCdf(studentTQuantile(p, df), df),
            p,
            {
              relative: 1e-11,
            },
          );
        },
      ),
    );
  });
  it("kernels return NaN outside their domain", () => {
    expect(normalQuantile(1.5)).toBeNaN();
    expect(studentTCdf(1, 0)).toBeNaN();
    expect(studentTQuantile(0.5, -1)).toBeNaN();
    expect(noncentralTCdf(1, -2, 1)).toBeNaN();
    expect(chiSquareSurvival(Number.NaN, 2)).toBeNaN();
  });
});
