import { describe, expect, it } from "vitest";
import { normalCdf, normalQuantile } from "../../src/stats/distributions.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import {
  predictiveCalibration,
  predictiveCdf,
  predictiveInterval,
  type RealizedComparison,
} from "../../src/stats/predictive-calibration.ts";
import { createRandom } from "../../src/stats/random.ts";
import { kolmogorovSmirnovUniform } from "../../src/stats/uniformity-test.ts";
import { readReviewFixture } from "./review-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface PredictiveCase {
  mean: number;
  scale: number;
  lower: number;
  upper: number;
  t: number;
  r: number;
  cdf: number;
}

const fixture = readReviewFixture<PredictiveCase>("predictive");
// Composite Simpson against R integrate(rel.tol = 1e-12).
const cdfTolerance = { absolute: 1e-8 };

describe("predictiveCdf", () => {
  it.each(fixture.cases.map((c, i) => [`truncated normal case ${i}`, c] as const))(
    "%s against R integrate()",
    (_, c) => {
      const actual = predictiveCdf(
        [
          {
            component: {
              kind: "truncatedNormal",
              mean: c.mean,
              scale: c.scale,
              lower: c.lower,
              upper: c.upper,
            },
            weight: 1,
          },
        ],
        c.t,
        c.r,
      );
      expectClose("predictive cdf", c, actual, c.cdf, cdfTolerance);
    },
  );

  it("is the normal convolution for normal and point components (closed form, textbook)", () => {
    const posterior = [
      { component: { kind: "normal", mean: 0.01, scale: 0.02 } as const, weight: 0.7 },
      { component: { kind: "point", at: 0 } as const, weight: 0.3 },
    ];
    const expected = 0.7 * normalCdf((0.03 - 0.01) / Math.hypot(0.02, 0.01)) + 0.3 * normalCdf(0.03 / 0.01);
    expectClose("mixture cdf", { r: 0.03 }, predictiveCdf(posterior, 0.01, 0.03), expected, {
      absolute: 1e-15,
    });
    const interval = predictiveInterval([posterior[0] as (typeof posterior)[0]], 0.01, 0.8);
    const half = normalQuantile(0.9) * Math.hypot(0.02, 0.01);
    expectClose("80 % predictive upper", {}, interval.upper, 0.01 + half, { absolute: 1e-10 });
  });
});

describe("predictiveCalibration on a known-truth simulation", () => {
  // theta ~ N(0, tau^2), y ~ N(theta, s^2), realized r ~ N(theta, t^2): the exact posterior is normal
  // (conjugate normal-normal, BDA3 section 2.5), so PIT values are uniform and coverage nominal.
  const random = createRandom(20260705);
  const tau = 0.02;
  const comparisons: RealizedComparison[] = [];
  const count = 2000;
  for (let i = 0; i < count; i++) {
    const s = 0.005 + 0.02 * random.uniform();
    const t = 0.005 + 0.01 * random.uniform();
    const theta = tau * random.normal();
    const y = theta + s * random.normal();
    const shrinkage = tau ** 2 / (tau ** 2 + s ** 2);
    const mean = shrinkage * y;
    const scale = Math.sqrt(shrinkage) * s;
    comparisons.push({
      claimed: y,
      shrunk: mean,
      posterior: [{ component: { kind: "normal", mean, scale }, weight: 1 }],
      realized: theta + t * random.normal(),
      realizedStandardError: t,
    });
  }
  const result = predictiveCalibration(comparisons);

  it("gives uniform PIT values and nominal coverage", () => {
    // Binomial Monte Carlo error of a share at n = 2000: sd = sqrt(p(1-p)/n); allow 4 sd.
    const allowance80 = 4 * Math.sqrt((0.8 * 0.2) / count);
    const allowance95 = 4 * Math.sqrt((0.95 * 0.05) / count);
    expectClose("80 % coverage", { count }, result.coverage80.share, 0.8, { absolute: allowance80 });
    expectClose("95 % coverage", { count }, result.coverage95.share, 0.95, { absolute: allowance95 });
    expect(kolmogorovSmirnovUniform(result.pit).pValue).toBeGreaterThan(0.001);
    expect(result.pitHistogram.reduce((a, b) => a + b, 0)).toBe(count);
  });

  it("fits a realization ratio that covers the posterior's prediction", () => {
    const { estimate, interval } = result.realizationRatio;
    // The true slope of realized on claimed is E[theta | y] / y = the average shrinkage factor.
    expect(interval.lower, `estimate ${estimate}`).toBeLessThan(result.predictedRealizationRatio + 0.05);
    expect(interval.upper, `estimate ${estimate}`).toBeGreaterThan(result.predictedRealizationRatio - 0.05);
    expect(estimate).toBeLessThan(1);
  });

  it("refuses an empty list", () => {
    expect(() => predictiveCalibration([])).toThrow(StatsInputError);
  });
});
