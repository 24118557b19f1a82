import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { liftFromMeans } from "../../src/stats/lift-from-means.ts";
import { expectClose } from "./tolerance.ts";

// Worked by hand to 7 significant figures.
const handTolerance = { relative: 1e-6 };

describe("liftFromMeans", () => {
  it("converts means 10 (sd 5) against 11 (sd 5), 100 a side (worked by hand, delta method)", () => {
    // y = 11/10 - 1 = 0.1. Var ~ sd_t^2/(n_t m_c^2) + m_t^2 sd_c^2/(n_c m_c^4)
    //   = 25/(100 * 100) + 121 * 25/(100 * 10000) = 0.0025 + 0.003025 = 0.005525; s = 0.07433034.
    const inputs = {
      controlMean: 10,
      controlSd: 5,
      controlN: 100,
      treatmentMean: 11,
      treatmentSd: 5,
      treatmentN: 100,
    };
    const result = liftFromMeans(inputs);
    expectClose("lift", inputs, result.lift, 0.1, handTolerance);
    expectClose("standard error", inputs, result.standardError, 0.07433034, handTolerance);
    expectClose("absolute difference", inputs, result.absoluteDifference ?? Number.NaN, 1, handTolerance);
  });

  it("converts a fall in the mean with unequal arms (worked by hand, delta method)", () => {
    // m_c = 2, sd_c = 4, n_c = 400; m_t = 1.8, sd_t = 3, n_t = 900. y = 1.8/2 - 1 = -0.1.
    // Var ~ 9/(900 * 4) + 3.24 * 16/(400 * 16) = 0.0025 + 0.0081 = 0.0106; s = sqrt(0.0106) = 0.1029563.
    const inputs = {
      controlMean: 2,
      controlSd: 4,
      controlN: 400,
      treatmentMean: 1.8,
      treatmentSd: 3,
      treatmentN: 900,
    };
    const result = liftFromMeans(inputs);
    expectClose("lift", inputs, result.lift, -0.1, handTolerance);
    expectClose("standard error", inputs, result.standardError, 0.1029563, handTolerance);
  });

  it("refuses a zero control mean, n < 2, negative sds and zero spread", () => {
    // statistics.md section 1: refuse m_c = 0, n < 2, s <= 0.
    const base = {
      controlMean: 10,
      controlSd: 5,
      controlN: 100,
      treatmentMean: 11,
      treatmentSd: 5,
      treatmentN: 100,
    };
    expect(() => liftFromMeans({ ...base, controlMean: 0 })).toThrow(StatsInputError);
    expect(() => liftFromMeans({ ...base, treatmentN: 1 })).toThrow(StatsInputError);
    expect(() => liftFromMeans({ ...base, controlSd: -1 })).toThrow(StatsInputError);
    expect(() => liftFromMeans({ ...base, controlSd: 0, treatmentSd: 0 })).toThrow(StatsInputError);
    expect(() => liftFromMeans({ ...base, treatmentMean: Number.NaN })).toThrow(StatsInputError);
  });
});
