import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { designAnalysis } from "../../src/stats/design-analysis.ts";
import { designErrorRates } from "../../src/stats/error-rates.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { operatingCurve, operatingPointsAtAlphas } from "../../src/stats/operating-curve.ts";
import { positivePredictiveValue } from "../../src/stats/positive-predictive-value.ts";
import { readCalculatorFixture } from "./fixture.ts";
import { expectClose } from "./tolerance.ts";

// Published figures are printed to one decimal of a percent; half of that is the tolerance.
const publishedPercentTolerance = { absolute: 0.0005 };
const publishedCountTolerance = { absolute: 0.5 };
const closedFormTolerance = { relative: 1e-14 };

describe("designErrorRates", () => {
  // Kohavi, Deng & Vermeer (2022), "A/B Testing Intuition Busters", KDD, Table 2: false positive
  // risk at alpha 0.05 (false-win rate 0.025) and power 0.8.
  const kohaviRows = [
    { winRate: 1 / 3, falsePositiveRisk: 0.059 },
    { winRate: 0.2, falsePositiveRisk: 0.111 },
    { winRate: 0.15, falsePositiveRisk: 0.15 },
    { winRate: 0.1, falsePositiveRisk: 0.22 },
    { winRate: 0.08, falsePositiveRisk: 0.264 },
  ];
  for (const row of kohaviRows) {
    it(`false positive risk at win rate ${row.winRate.toFixed(3)} (Kohavi, Deng & Vermeer 2022)`, () => {
      const rates = designErrorRates({ winRate: row.winRate, alpha: 0.05, power: 0.8 });
      expectClose(
        "falsePositiveRisk",
        row,
        rates.falsePositiveRisk,
        row.falsePositiveRisk,
        publishedPercentTolerance,
      );
    });
  }

  it("Colquhoun (2014) 1,000-test tree: 80 true and 45 false positives, FDR 36 %", () => {
    // Colquhoun (2014), "An investigation of the false discovery rate and the misinterpretation
    // of p-values", R. Soc. Open Sci. 1:140216, Fig. 1: prior 0.1, power 0.8, alpha 0.05.
    const inputs = { winRate: 0.1, alpha: 0.05, power: 0.8, tests: 1000 };
    const { confusion } = designErrorRates(inputs);
    expectClose("truePositives", inputs, confusion.truePositives, 80, publishedCountTolerance);
    expectClose("falsePositives", inputs, confusion.falsePositives, 45, publishedCountTolerance);
    expectClose("falseDiscoveryRate", inputs, confusion.falseDiscoveryRate, 0.36, { absolute: 0.005 });
    expect(
      confusion.truePositives + confusion.falsePositives + confusion.falseNegatives + confusion.trueNegatives,
    ).toBeCloseTo(1000, 10);
  });

  it("common practice: at win rate 0.5, alpha 0.05, power 0.8, ~6 % of rejections and ~17 % of non-rejections are wrong", () => {
    // A fact of the trade (common practice), with alpha counted fully.
    const inputs = { winRate: 0.5, alpha: 0.05, power: 0.8 };
    const rates = designErrorRates(inputs);
    expectClose("errorGivenRejection", inputs, rates.errorGivenRejection, 0.06, { absolute: 0.005 });
    expectClose("errorGivenNoRejection", inputs, rates.errorGivenNoRejection, 0.17, { absolute: 0.005 });
    // The exact values of the formula: 0.05 / 0.85 and 0.1 / 0.575.
    expectClose("errorGivenRejection", inputs, rates.errorGivenRejection, 0.05 / 0.85, closedFormTolerance);
    expectClose(
      "errorGivenNoRejection",
      inputs,
      rates.errorGivenNoRejection,
      0.1 / 0.575,
      closedFormTolerance,
    );
  });

  it("false omission uses the one-sided false-win rate (statistics.md section 2)", () => {
    const inputs = { winRate: 0.2, alpha: 0.05, power: 0.8 };
    const rates = designErrorRates(inputs);
    expectClose(
      "falseOmissionRisk",
      inputs,
      rates.falseOmissionRisk,
      (0.2 * 0.2) / (0.2 * 0.2 + 0.975 * 0.8),
      closedFormTolerance,
    );
  });

  it("rejects bad input with a typed error", () => {
    expect(() => designErrorRates({ winRate: 0, alpha: 0.05, power: 0.8 })).toThrow(StatsInputError);
    expect(() => designErrorRates({ winRate: 0.1, alpha: 1, power: 0.8 })).toThrow(
      /alpha must be strictly between 0 and 1/,
    );
    expect(() => designErrorRates({ winRate: 0.1, alpha: 0.05, power: 0.02 })).toThrow(StatsInputError);
    expect(() => designErrorRates({ winRate: 0.1, alpha: 0.05, power: 0.8, tests: 0 })).toThrow(
      StatsInputError,
    );
  });

  it("properties: rates are probabilities; false positive risk falls with the win rate and with power", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.001, max: 0.999, noNaN: true }),
        fc.double({ min: 0.001, max: 0.5, noNaN: true }),
        fc.double({ min: 0.01, max: 0.99, noNaN: true }),
        (winRate, alpha, power) => {
          fc.pre(power > alpha / 2);
          const rates = designErrorRates({ winRate, alpha, power });
          for (const value of [
            rates.falsePositiveRisk,
            rates.falseOmissionRisk,
            rates.errorGivenRejection,
            rates.errorGivenNoRejection,
          ]) {
            expect(value).toBeGreaterThanOrEqual(0);
            expect(value).toBeLessThanOrEqual(1);
          }
          const moreWins = designErrorRates({ winRate: Math.min(0.999, winRate * 1.1), alpha, power });
          expect(moreWins.falsePositiveRisk).toBeLessThanOrEqual(rates.falsePositiveRisk + 1e-15);
          const morePower = designErrorRates({ winRate, alpha, power: Math.min(0.999, power * 1.1) });
          expect(morePower.falsePositiveRisk).toBeLessThanOrEqual(rates.falsePositiveRisk + 1e-15);
        },
      ),
    );
  });
});

describe("positivePredictiveValue (Ioannidis 2005)", () => {
  // Ioannidis (2005), "Why Most Published Research Findings Are False", PLoS Med 2:e124, Table 4.
  // Each row: power 1 - beta, pre-study odds R, bias u, alpha 0.05, and the PPV the table prints
  // (two significant digits). The expected value is derived from the paper's formula
  // PPV = ([1 - beta]R + u beta R) / (R + alpha - beta R + u - u alpha + u beta R).
  const rows = [
    { example: "adequately powered RCT, little bias, 1:1 odds", power: 0.8, odds: 1, bias: 0.1, ppv: 0.85 },
    {
      example: "confirmatory meta-analysis of good-quality RCTs",
      power: 0.95,
      odds: 2,
      bias: 0.3,
      ppv: 0.85,
    },
    { example: "meta-analysis of small inconclusive studies", power: 0.8, odds: 1 / 3, bias: 0.4, ppv: 0.41 },
    { example: "underpowered, well-performed phase I/II RCT", power: 0.2, odds: 1 / 5, bias: 0.2, ppv: 0.23 },
    {
      example: "underpowered, poorly performed phase I/II RCT",
      power: 0.2,
      odds: 1 / 5,
      bias: 0.8,
      ppv: 0.17,
    },
    {
      example: "adequately powered exploratory epidemiological study",
      power: 0.8,
      odds: 1 / 10,
      bias: 0.3,
      ppv: 0.2,
    },
    {
      example: "underpowered exploratory epidemiological study",
      power: 0.2,
      odds: 1 / 10,
      bias: 0.3,
      ppv: 0.12,
    },
    {
      example: "discovery-oriented research with massive testing",
      power: 0.2,
      odds: 1 / 1000,
      bias: 0.8,
      ppv: 0.001,
    },
    {
      example: "as the previous row, with more limited bias",
      power: 0.2,
      odds: 1 / 1000,
      bias: 0.2,
      ppv: 0.0015,
    },
  ];
  for (const row of rows) {
    it(`Table 4: ${row.example}`, () => {
      const inputs = { preStudyOdds: row.odds, alpha: 0.05, power: row.power, bias: row.bias };
      const ppv = positivePredictiveValue(inputs);
      const beta = 1 - row.power;
      const formula =
        (row.power * row.odds + row.bias * beta * row.odds) /
        (row.odds + 0.05 - beta * row.odds + row.bias - row.bias * 0.05 + row.bias * beta * row.odds);
      expectClose("PPV (formula)", inputs, ppv, formula, closedFormTolerance);
      // Two significant digits as printed in the table.
      expectClose("PPV (Table 4)", inputs, ppv, row.ppv, { relative: 0.05 });
    });
  }

  it("without bias it equals 1 - FDR of a rejection at level alpha", () => {
    const inputs = { preStudyOdds: 0.1 / 0.9, alpha: 0.05, power: 0.8 };
    const rates = designErrorRates({ winRate: 0.1, alpha: 0.05, power: 0.8 });
    expectClose(
      "PPV (u = 0)",
      inputs,
      positivePredictiveValue(inputs),
      1 - rates.errorGivenRejection,
      closedFormTolerance,
    );
  });
});

describe("operatingCurve", () => {
  it("runs from (0, 0) to (1, 1), is monotone, and its area is the binormal Phi(lambda / sqrt 2)", () => {
    const curve = operatingCurve({ effect: 2.8, standardError: 1, points: 4001 });
    expect(curve.points[0]?.nullShipped).toBe(0);
    expect(curve.points[0]?.winsShipped).toBe(0);
    expect(curve.points.at(-1)?.winsShipped).toBe(1);
    let trapezoid = 0;
    for (let index = 1; index < curve.points.length; index++) {
      const previous = curve.points[index - 1]!;
      const point = curve.points[index]!;
      expect(point.winsShipped).toBeGreaterThanOrEqual(previous.winsShipped);
      trapezoid +=
        ((point.nullShipped - previous.nullShipped) * (point.winsShipped + previous.winsShipped)) / 2;
    }
    // Hanley & McNeil (1982): a binormal ROC with separation lambda has area Phi(lambda / sqrt 2).
    expectClose("operating curve area (trapezoid vs closed form)", { lambda: 2.8 }, trapezoid, curve.area, {
      absolute: 1e-4,
    });
  });
  it("at the conventional threshold the shipped share of wins is the one-sided power", () => {
    const curve = operatingCurve({ effect: 2.8, standardError: 1, points: 41 });
    const conventional = curve.points.find((point) => Math.abs(point.alpha - 0.05) < 1e-12)!;
    // Gelman & Carlin (2014): D = 2.8 s has power 0.80 in the right direction.
    const rightSign = designAnalysis({ effect: 2.8, standardError: 1 }).powerRightSign;
    expectClose("winsShipped at alpha 0.05", { effect: 2.8 }, conventional.winsShipped, rightSign, {
      relative: 1e-14,
    });
    expectClose("winsShipped at alpha 0.05 (paper)", { effect: 2.8 }, conventional.winsShipped, 0.8, {
      absolute: 0.005,
    });
  });
  it("matches R: points at conventional alphas and the area, normal and t references", () => {
    // test/fixtures/calculators/generate.R: qt/pt (qnorm/pnorm) and integrate() of f(x) F(x + lambda).
    interface CurveCase {
      readonly lambda: number;
      readonly df: number | null;
      readonly area: number;
      readonly points: readonly {
        alpha: number;
        threshold: number;
        nullShipped: number;
        winsShipped: number;
      }[];
    }
    const fixture = readCalculatorFixture<CurveCase>("operating-curve");
    // R's qt/pt agree with ours to ~1e-14 (distributions.test.ts); integrate() asks 1e-13.
    const pointTolerance = { relative: 1e-12, absolute: 1e-15 };
    const areaTolerance = { relative: 1e-11 };
    for (const row of fixture.cases) {
      const inputs = { effect: row.lambda, standardError: 1, ...(row.df === null ? {} : { df: row.df }) };
      const points = operatingPointsAtAlphas(
        inputs,
        row.points.map((point) => point.alpha),
      );
      row.points.forEach((expected, index) => {
        const actual = points[index]!;
        expectClose(
          "threshold",
          { ...inputs, alpha: expected.alpha },
          actual.threshold,
          expected.threshold,
          pointTolerance,
        );
        expectClose(
          "nullShipped",
          { ...inputs, alpha: expected.alpha },
          actual.nullShipped,
          expected.nullShipped,
          pointTolerance,
        );
        expectClose(
          "winsShipped",
          { ...inputs, alpha: expected.alpha },
          actual.winsShipped,
          expected.winsShipped,
          pointTolerance,
        );
      });
      expectClose("area", inputs, operatingCurve(inputs).area, row.area, areaTolerance);
    }
  });
  it("rejects a non-positive effect or SE", () => {
    expect(() => operatingCurve({ effect: 0, standardError: 1 })).toThrow(StatsInputError);
    expect(() => operatingCurve({ effect: 1, standardError: 1, df: 0 })).toThrow(/df must be/);
    expect(() => operatingCurve({ effect: 1, standardError: -1 })).toThrow(StatsInputError);
  });
});
