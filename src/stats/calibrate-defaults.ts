/**
 * The full calibration of a company's defaults (statistics.md section 7): the optimum design,
 * the textbook design (alpha 0.05 two-sided, power 0.8 at the MDE) and the company's current
 * design beside it with the value each leaves on the table, the curves (value against alpha at
 * the best n, value against n at the best alpha, the operating curve) and the sensitivity to
 * the win rate and the effect scale, with the assumptions and cautions every estimate carries.
 */

import { type DefaultsSensitivity, defaultsSensitivity, type PriorVariant } from "./defaults-sensitivity.ts";
import { normalQuantile } from "./distributions.ts";
import type { EffectPrior } from "./effect-prior.ts";
import { requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import { type DefaultsOptimum, type OptimizeOptions, optimizeDefaults } from "./optimize-defaults.ts";
import { shippingPartial } from "./shipping-expectation.ts";
import {
  alphaFromThreshold,
  type DesignEvaluation,
  evaluateDesign,
  type ProgramEconomics,
  runDays,
  standardErrorAt,
  testsPerPeriod,
  textbookSampleSize,
  validateProgramEconomics,
  valuePerPeriod,
} from "./test-value.ts";

/** The company's current design, e.g. medians of its planned alpha and n (from its history). */
export interface CurrentDesign {
  readonly alpha: number;
  readonly nPerArm: number;
  /** Where the figures come from, for the report. */
  readonly source: string;
}

export interface CalibrationInput {
  readonly program: ProgramEconomics;
  /** The effect the textbook design is powered for; default: the prior's mean size of a real win. */
  readonly mde?: number;
  /** Longest run in days (default: the period). */
  readonly maxDays?: number;
  readonly current?: CurrentDesign;
  /** Builds the prior of a sensitivity scenario. */
  readonly priorFor: (variant: PriorVariant) => EffectPrior;
  /** One line on where the prior comes from. */
  readonly priorDescription: string;
  readonly optimize?: OptimizeOptions;
}

export type CalibratedDesign = DesignEvaluation & {
  /** Recommended expected value minus this design's, per period. */
  readonly valueLeftOnTable: number;
};

export interface ValueAtAlpha {
  readonly alpha: number;
  readonly threshold: number;
  readonly expectedValue: number;
}

export interface ValueAtN {
  readonly nPerArm: number;
  readonly days: number;
  readonly testsPerPeriod: number;
  readonly expectedValue: number;
}

export interface OperatingPoint {
  /** Share of non-wins (theta <= 0) shipped. */
  readonly falseShipRate: number;
  /** Share of real wins (theta > 0) shipped. */
  readonly trueShipRate: number;
  readonly alpha: number;
}

export interface OperatingCurve {
  readonly design: "recommended" | "textbook" | "current";
  readonly nPerArm: number;
  readonly points: readonly OperatingPoint[];
  /** Where the design's own threshold sits on its curve. */
  readonly designPoint: OperatingPoint;
}

export interface CalibrationReport {
  readonly recommended: CalibratedDesign;
  readonly textbook: CalibratedDesign;
  readonly current: (CalibratedDesign & { readonly source: string }) | null;
  readonly optimum: Pick<DefaultsOptimum, "gridBest" | "evaluations" | "check" | "bounds">;
  readonly curves: {
    readonly valueVsAlpha: readonly ValueAtAlpha[];
    readonly valueVsN: readonly ValueAtN[];
    readonly operatingCurves: readonly OperatingCurve[];
  };
  readonly sensitivity: DefaultsSensitivity;
  readonly assumptions: readonly string[];
  readonly cautions: readonly string[];
}

const textbookAlpha = 0.05;
const textbookPower = 0.8;
const curvePoints = 41;

/** Mean size of a real win under the prior, E[theta | theta > 0]. */
export function meanRealWin(prior: EffectPrior): number {
  const wins = shippingPartial(prior, 1, Number.NEGATIVE_INFINITY, 0, Number.POSITIVE_INFINITY);
  return wins.probability > 0 ? wins.effectMoment / wins.probability : Number.NaN;
}

/** Runs the calibration. Throws StatsInputError on invalid inputs. */
export function calibrateDefaults(input: CalibrationInput): CalibrationReport {
  const { program } = input;
  validateProgramEconomics(program);
  const mde = input.mde ?? meanRealWin(program.prior);
  if (input.mde !== undefined) requirePositive("mde", input.mde);
  else if (!(mde > 0)) throw new StatsInputError("mde", "given when the prior has no real wins", mde);
  if (input.current) {
    requireOpenUnit("current.alpha", input.current.alpha);
    requirePositive("current.nPerArm", input.current.nPerArm);
  }
  const optimizeOptions: OptimizeOptions = {
    ...input.optimize,
    ...(input.maxDays === undefined ? {} : { maxDays: input.maxDays }),
  };
  const optimum = optimizeDefaults(program, optimizeOptions);
  const recommendedDesign = evaluateDesign(program, optimum.threshold, optimum.nPerArm, mde);
  const withLoss = (design: DesignEvaluation): CalibratedDesign => ({
    ...design,
    valueLeftOnTable: recommendedDesign.expectedValue - design.expectedValue,
  });
  const textbookThreshold = normalQuantile(1 - textbookAlpha / 2);
  const textbookN = textbookSampleSize(program.metric, textbookAlpha, textbookPower, mde);
  const textbook = withLoss(evaluateDesign(program, textbookThreshold, textbookN, mde));
  const current = input.current
    ? {
        ...withLoss(
          evaluateDesign(program, normalQuantile(1 - input.current.alpha / 2), input.current.nPerArm, mde),
        ),
        source: input.current.source,
      }
    : null;

  const { bounds } = optimum;
  const valueVsAlpha: ValueAtAlpha[] = [];
  // alpha from 1e-4 to 0.8, log-spaced, plus the optimum itself so the curve peaks where it should.
  for (let i = 0; i < curvePoints; i++) {
    const alpha = 10 ** (-4 + (i * Math.log10(0.8 / 1e-4)) / (curvePoints - 1));
    const threshold = normalQuantile(1 - alpha / 2);
    valueVsAlpha.push({
      alpha,
      threshold,
      expectedValue: valuePerPeriod(program, threshold, optimum.nPerArm),
    });
  }
  valueVsAlpha.push({
    alpha: recommendedDesign.alpha,
    threshold: optimum.threshold,
    expectedValue: optimum.expectedValue,
  });
  valueVsAlpha.sort((left, right) => left.alpha - right.alpha);
  const valueVsN: ValueAtN[] = [];
  const logMin = Math.log(bounds.minNPerArm);
  const logMax = Math.log(bounds.maxNPerArm);
  for (let i = 0; i < curvePoints; i++) {
    const nPerArm = Math.exp(logMin + (i * (logMax - logMin)) / (curvePoints - 1));
    valueVsN.push(valueAtN(program, optimum.threshold, nPerArm));
  }
  valueVsN.push(valueAtN(program, optimum.threshold, optimum.nPerArm));
  valueVsN.sort((left, right) => left.nPerArm - right.nPerArm);
  const operatingCurves: OperatingCurve[] = [
    operatingCurve(program, "recommended", optimum.threshold, optimum.nPerArm),
    operatingCurve(program, "textbook", textbookThreshold, textbookN),
  ];
  if (current) operatingCurves.push(operatingCurve(program, "current", current.threshold, current.nPerArm));

  const sensitivity = defaultsSensitivity(
    program,
    { threshold: optimum.threshold, nPerArm: optimum.nPerArm },
    input.priorFor,
    optimizeOptions,
  );
  const maxDays = input.maxDays ?? program.periodDays;
  const cautions = [
    "This does not replace a statistician's review of the program and its metrics.",
    "Not for clinical or safety-critical decisions.",
    "The recommendation is only as good as the prior: a prior fitted to few tests, or to results that were " +
      "stopped early or selectively reported, moves the optimum.",
  ];
  if (sensitivity.fragile) {
    cautions.push(
      `The recommendation is fragile (${sensitivity.fragileRule}); check the prior before adopting it.`,
    );
  }
  if (optimum.expectedValue <= 0) {
    cautions.push(
      "No design creates value with these inputs: at this launch cost and prior, testing does not pay.",
    );
  }
  if (!optimum.check.isMaximum)
    cautions.push("The optimiser's neighbourhood check failed: a neighbour beats the optimum.");
  if (textbook.days > maxDays) {
    cautions.push(
      `The textbook design runs ${textbook.days.toFixed(1)} days, longer than the maximum of ${maxDays}.`,
    );
  }
  if (recommendedDesign.alpha > textbookAlpha * 4) {
    cautions.push(
      "The recommended alpha is far above 0.05: it ships many results that are not real wins (see falsePositiveRisk); " +
        "it pays here because small true effects are common and a shipped null costs only the launch cost.",
    );
  }
  const arms = program.arms;
  const assumptions = [
    `Prior of true effects: ${input.priorDescription}.`,
    "Decision rule: ship a treatment arm when its estimated lift y exceeds z* s(n) (one-sided); alpha = 2 (1 - Phi(z*)).",
    "Estimates are normal: y ~ N(theta, s^2) with s = s_unit / sqrt(n); " +
      (program.metric.kind === "rate"
        ? `s = sqrt(2 (1 - p) / (n p)) on the baseline rate p = ${program.metric.baselineRate}.`
        : `s = (sd / m) sqrt(2 / n) on the mean m = ${program.metric.mean} with per-user sd ${program.metric.sd}.`),
    `n is per arm; a test uses ${arms} x n users and runs ${arms} n / t days at t = ${program.dailyTraffic} eligible users a day.`,
    `A period of ${program.periodDays} days holds min(${program.backlog} / ${arms - 1}, D t / (${arms} n)) tests (a real number).`,
    `Shipping is worth V theta - C with V = ${program.valuePerLift} per unit of relative lift and C = ${program.launchCost}` +
      (program.lossPenalty > 0 ? `, and V theta (1 + ${program.lossPenalty}) - C when theta < 0.` : "."),
    arms > 2
      ? `Each of the ${arms - 1} treatment arms is a separate idea from the prior, compared with the control at the same ` +
        "threshold; every arm that passes ships; the test's value is the sum over arms (exact by linearity)."
      : "Two arms: one treatment against one control.",
    `Power is P(ship | theta = mde) at mde = ${Number(mde.toPrecision(4))}${input.mde === undefined ? " (the prior's mean size of a real win)" : ""}.`,
    "falsePositiveRisk = P(theta <= 0 | shipped); exaggeration = E[y | shipped] / E[theta | shipped].",
    `Textbook design: alpha 0.05 two-sided, power 0.8 at the mde, n = s_unit^2 (z_0.975 + z_0.8)^2 / mde^2.`,
    `Search box: z* in [${bounds.minThreshold}, ${bounds.maxThreshold}], n per arm in [${bounds.minNPerArm}, ${bounds.maxNPerArm.toFixed(0)}] (runs of at most ${maxDays} days).`,
    "All expectations are exact integrals over the prior (closed forms; adaptive quadrature for half-t components), not simulation.",
  ];
  return {
    recommended: withLoss(recommendedDesign),
    textbook,
    current,
    optimum: { gridBest: optimum.gridBest, evaluations: optimum.evaluations, check: optimum.check, bounds },
    curves: { valueVsAlpha, valueVsN, operatingCurves },
    sensitivity,
    assumptions,
    cautions,
  };
}

function valueAtN(program: ProgramEconomics, threshold: number, nPerArm: number): ValueAtN {
  return {
    nPerArm,
    days: runDays(program, nPerArm),
    testsPerPeriod: testsPerPeriod(program, nPerArm),
    expectedValue: valuePerPeriod(program, threshold, nPerArm),
  };
}

function operatingCurve(
  program: ProgramEconomics,
  design: OperatingCurve["design"],
  threshold: number,
  nPerArm: number,
): OperatingCurve {
  const standardError = standardErrorAt(program.metric, nPerArm);
  const realMass = shippingPartial(
    program.prior,
    1,
    Number.NEGATIVE_INFINITY,
    0,
    Number.POSITIVE_INFINITY,
  ).probability;
  const pointAt = (z: number): OperatingPoint => {
    const whole = shippingPartial(program.prior, standardError, z * standardError).probability;
    const real = shippingPartial(
      program.prior,
      standardError,
      z * standardError,
      0,
      Number.POSITIVE_INFINITY,
    ).probability;
    return {
      falseShipRate: realMass < 1 ? (whole - real) / (1 - realMass) : Number.NaN,
      trueShipRate: realMass > 0 ? real / realMass : Number.NaN,
      alpha: alphaFromThreshold(z),
    };
  };
  const points: OperatingPoint[] = [];
  // z* from -4 to 6 in steps of 0.25 (41 points), so that z* = 0 and whole numbers are on it.
  for (let i = 0; i < curvePoints; i++) points.push(pointAt(-4 + (i * 10) / (curvePoints - 1)));
  return { design, nPerArm, points, designPoint: pointAt(threshold) };
}
