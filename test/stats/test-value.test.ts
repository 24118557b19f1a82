import { describe, expect, it } from "vitest";
import { normalCdf } from "../../src/stats/distributions.ts";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import {
  evaluateDesign,
  type ProgramEconomics,
  runDays,
  standardErrorAt,
  testsPerPeriod,
  textbookSampleSize,
  validateProgramEconomics,
  valuePerPeriod,
  valuePerTest,
} from "../../src/stats/test-value.ts";
import { expectClose } from "./tolerance.ts";

// Two point masses: half the ideas do nothing, half lift by exactly 2 %. Every figure below
// follows by hand from statistics.md section 7's conventions.
const prior: EffectPrior = {
  family: "grid",
  components: [
    { component: { kind: "point", at: 0 }, weight: 0.5 },
    { component: { kind: "point", at: 0.02 }, weight: 0.5 },
  ],
};
const program: ProgramEconomics = {
  prior,
  metric: { kind: "rate", baselineRate: 0.1 },
  dailyTraffic: 10_000,
  periodDays: 90,
  backlog: 1_000,
  arms: 2,
  valuePerLift: 1e6,
  launchCost: 1_000,
  lossPenalty: 0,
};
const exact = { relative: 1e-13 };

describe("the conventions of statistics.md section 7, checked by hand", () => {
  it("SE of a relative lift: sqrt(2 (1-p) / (n p)) on a rate, (sd/m) sqrt(2/n) on a mean", () => {
    expectClose(
      "rate SE",
      { p: 0.1, n: 10_000 },
      standardErrorAt(program.metric, 10_000),
      Math.sqrt(0.0018),
      exact,
    );
    expectClose(
      "mean SE",
      { m: 20, sd: 30, n: 5_000 },
      standardErrorAt({ kind: "mean", mean: 20, sd: 30 }, 5_000),
      1.5 * Math.sqrt(2 / 5_000),
      exact,
    );
  });
  it("a test uses arms x n users, runs arms n / t days; a period holds min(M, D t / (arms n)) tests", () => {
    expectClose("days", {}, runDays(program, 25_000), 5, exact);
    expectClose("tests per period", {}, testsPerPeriod(program, 25_000), 18, exact);
    expectClose("backlog binds", {}, testsPerPeriod({ ...program, backlog: 7 }, 25_000), 7, exact);
    // Three arms: 3 n users a test, two ideas a test (plumbline's stated convention).
    expectClose("three-arm days", {}, runDays({ ...program, arms: 3 }, 10_000), 3, exact);
    expectClose(
      "three-arm backlog",
      {},
      testsPerPeriod({ ...program, arms: 3, backlog: 10 }, 1_000),
      5,
      exact,
    );
  });
  it("value of a test: E[(V theta - C) 1{y > z s}], with (1 + L) on losses", () => {
    const n = 10_000;
    const s = Math.sqrt(0.0018);
    const z = 1.5;
    const shipNull = normalCdf(-z);
    const shipWin = normalCdf(0.02 / s - z);
    const byHand = 0.5 * shipNull * -1_000 + 0.5 * shipWin * (1e6 * 0.02 - 1_000);
    expectClose("value per test", { z, n }, valuePerTest(program, z, n), byHand, exact);
    expectClose("value per period", { z, n }, valuePerPeriod(program, z, n), byHand * 45, exact);
    const lossy: ProgramEconomics = {
      ...program,
      lossPenalty: 0.5,
      prior: { family: "grid", components: [{ component: { kind: "point", at: -0.01 }, weight: 1 }] },
    };
    const shipLoss = normalCdf(-0.01 / s - z);
    expectClose(
      "value with a loss penalty",
      { z, n },
      valuePerTest(lossy, z, n),
      shipLoss * (1e6 * -0.01 * 1.5 - 1_000),
      exact,
    );
  });
  it("evaluateDesign: false positive risk, exaggeration, expected wins", () => {
    const n = 10_000;
    const s = Math.sqrt(0.0018);
    const z = 1;
    const design = evaluateDesign(program, z, n, 0.02);
    const shipNull = normalCdf(-z);
    const shipWin = normalCdf(0.02 / s - z);
    expectClose("falsePositiveRisk", {}, design.falsePositiveRisk, shipNull / (shipNull + shipWin), exact);
    expectClose("power", {}, design.power, shipWin, exact);
    expectClose("expectedRealWins", {}, design.expectedRealWins, 45 * 0.5 * shipWin, exact);
    // E[y 1{ship}] for a point mass a: a P + s phi((a - t)/s) (the normal's partial mean).
    const phi = (x: number) => Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI);
    const claimed = 0.5 * (s * phi(-z)) + 0.5 * (0.02 * shipWin + s * phi(0.02 / s - z));
    expectClose("exaggeration", {}, design.exaggeration, claimed / (0.5 * 0.02 * shipWin), {
      relative: 1e-12,
    });
    expectClose("alpha", {}, design.alpha, 2 * normalCdf(-1), exact);
  });
  it("textbook n: s_unit^2 (z_0.975 + z_0.8)^2 / mde^2 gives power 0.8 on the shipping tail", () => {
    const n = textbookSampleSize(program.metric, 0.05, 0.8, 0.02);
    // Common practice: 2 (1-p)/p (1.959964 + 0.841621)^2 / 0.02^2 = 18 x 7.848879 / 0.0004.
    expectClose("textbook n", {}, n, (18 * (1.959963984540054 + 0.8416212335729143) ** 2) / 0.0004, {
      relative: 1e-12,
    });
    expectClose("its power", {}, evaluateDesign(program, 1.959963984540054, n, 0.02).power, 0.8, {
      relative: 1e-12,
    });
  });
  it("validates the program (StatsInputError names the field)", () => {
    expect(() => validateProgramEconomics({ ...program, arms: 1 })).toThrow(/arms/);
    expect(() =>
      validateProgramEconomics({ ...program, metric: { kind: "rate", baselineRate: 1.2 } }),
    ).toThrow(/baselineRate/);
    expect(() => validateProgramEconomics({ ...program, launchCost: -1 })).toThrow(/launchCost/);
  });
});
