/**
 * The expected value of one test and of a period of testing under the rule "ship when
 * y > z* s(n)", and what a design (z*, n) implies for a program: alpha, power, false positive
 * risk, exaggeration, expected real and false wins (statistics.md section 7).
 *
 * Conventions, exactly as statistics.md section 7 states them:
 * - n is per arm; the SE of a relative lift is s = sqrt(2 (1-p) / (n p)) on a baseline rate p,
 *   s = (sd/m) sqrt(2/n) on a mean m with per-user sd.
 * - a test uses arms * n users and runs arms * n / t days at eligible traffic t per day; a period
 *   of D days holds min(M', D t / (arms n)) tests (a real number, not rounded).
 * - shipping a comparison with true effect theta is worth V theta - C, and V theta (1 + L) - C when
 *   theta < 0 (L: the extra penalty for a shipped loss).
 * Several arms (plumbline's convention, stated in every report): a test with k arms holds k - 1
 * treatment arms, each a separate idea drawn from the prior and each compared with the control
 * at the same threshold; every arm that passes ships. By linearity of expectation the value of
 * the test is (k - 1) times the value of one comparison whatever the correlation the shared
 * control induces between comparisons, and a test uses k - 1 ideas of the backlog, so
 * M' = M / (k - 1) (for two arms, M' = M as in statistics.md).
 */
import { normalCdf, normalQuantile } from "./distributions.ts";
import type { EffectPrior } from "./effect-prior.ts";
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import { expectedShippedEstimate, shippingPartial } from "./shipping-expectation.ts";

/** What the tested metric is: a conversion rate, or a mean with a per-user standard deviation. */
export type MetricScale =
  | { readonly kind: "rate"; readonly baselineRate: number }
  | { readonly kind: "mean"; readonly mean: number; readonly sd: number };

/** Everything the value of a testing program depends on, besides the design (z*, n). */
export interface ProgramEconomics {
  readonly prior: EffectPrior;
  readonly metric: MetricScale;
  /** Eligible users per day (t). */
  readonly dailyTraffic: number;
  /** Length of the period valued (D), e.g. 90 for a quarter. */
  readonly periodDays: number;
  /** Ideas available in the period (M). */
  readonly backlog: number;
  /** Arms per test, control included (k >= 2). */
  readonly arms: number;
  /** Value V of one unit of relative lift (a lift of 1 = +100 %) over the period. */
  readonly valuePerLift: number;
  /** Fixed cost C of one launch. */
  readonly launchCost: number;
  /** Extra penalty L for a shipped loss (0: a loss costs what a win of the same size earns). */
  readonly lossPenalty: number;
}

/** Validates a program's inputs (user-facing tier: throws StatsInputError). */
export function validateProgramEconomics(program: ProgramEconomics): void {
  if (program.metric.kind === "rate") requireOpenUnit("baselineRate", program.metric.baselineRate);
  else {
    requireFinite("mean", program.metric.mean);
    if (program.metric.mean === 0) throw new StatsInputError("mean", "non-zero", program.metric.mean);
    requirePositive("sd", program.metric.sd);
  }
  requirePositive("dailyTraffic", program.dailyTraffic);
  requirePositive("periodDays", program.periodDays);
  requirePositive("backlog", program.backlog);
  if (!Number.isInteger(program.arms) || program.arms < 2) {
    throw new StatsInputError("arms", "an integer of at least 2", program.arms);
  }
  requirePositive("valuePerLift", program.valuePerLift);
  requireFinite("launchCost", program.launchCost);
  if (program.launchCost < 0) throw new StatsInputError("launchCost", "at least 0", program.launchCost);
  requireFinite("lossPenalty", program.lossPenalty);
  if (program.lossPenalty < 0) throw new StatsInputError("lossPenalty", "at least 0", program.lossPenalty);
  if (program.prior.components.length === 0) throw new StatsInputError("prior", "a non-empty mixture", 0);
}

/** s_unit such that the SE of a relative lift at n per arm is s_unit / sqrt(n). */
export function unitStandardError(metric: MetricScale): number {
  if (metric.kind === "rate") return Math.sqrt((2 * (1 - metric.baselineRate)) / metric.baselineRate);
  return Math.abs(metric.sd / metric.mean) * Math.SQRT2;
}

/** SE of the relative lift at n users per arm. */
export function standardErrorAt(metric: MetricScale, nPerArm: number): number {
  return unitStandardError(metric) / Math.sqrt(nPerArm);
}

/** Run length in days: arms * n / t (not rounded). */
export function runDays(program: ProgramEconomics, nPerArm: number): number {
  return (program.arms * nPerArm) / program.dailyTraffic;
}

/** Ideas one test uses: its treatment arms. */
export function ideasPerTest(program: ProgramEconomics): number {
  return program.arms - 1;
}

/** Tests in a period: min(M / (k - 1), D t / (k n)), a real number. */
export function testsPerPeriod(program: ProgramEconomics, nPerArm: number): number {
  return Math.min(
    program.backlog / ideasPerTest(program),
    (program.periodDays * program.dailyTraffic) / (program.arms * nPerArm),
  );
}

/** Two-sided alpha equivalent to the one-sided threshold z*: 2 (1 - Phi(z*)). */
export function alphaFromThreshold(threshold: number): number {
  return 2 * normalCdf(-threshold);
}

/** Expected value of one comparison: E[(V theta - C) 1{ship}] + V L E[theta 1{theta < 0} 1{ship}]. */
export function valuePerComparison(program: ProgramEconomics, threshold: number, nPerArm: number): number {
  const standardError = standardErrorAt(program.metric, nPerArm);
  const liftThreshold = threshold * standardError;
  const whole = shippingPartial(program.prior, standardError, liftThreshold);
  let value = program.valuePerLift * whole.effectMoment - program.launchCost * whole.probability;
  if (program.lossPenalty > 0) {
    const losses = shippingPartial(program.prior, standardError, liftThreshold, Number.NEGATIVE_INFINITY, 0);
    value += program.valuePerLift * program.lossPenalty * losses.effectMoment;
  }
  return value;
}

/** Expected value of one test: (k - 1) comparisons. */
export function valuePerTest(program: ProgramEconomics, threshold: number, nPerArm: number): number {
  return ideasPerTest(program) * valuePerComparison(program, threshold, nPerArm);
}

/** Expected value of a period: tests per period times the value of a test. */
export function valuePerPeriod(program: ProgramEconomics, threshold: number, nPerArm: number): number {
  return testsPerPeriod(program, nPerArm) * valuePerTest(program, threshold, nPerArm);
}

/** What a design (z*, n) does for the program. All rates are per comparison, counts per period. */
export interface DesignEvaluation {
  /** Two-sided alpha equivalent, 2 (1 - Phi(z*)). */
  readonly alpha: number;
  /** One-sided threshold z*: ship when y / s > z*. */
  readonly threshold: number;
  /** The same threshold on the lift scale, z* s(n). */
  readonly liftThreshold: number;
  readonly nPerArm: number;
  readonly standardError: number;
  readonly days: number;
  readonly testsPerPeriod: number;
  /** P(ship | theta = mde) = Phi(mde / s - z*) (the shipping tail only; statistics.md section 0). */
  readonly power: number;
  /** The effect the power refers to. */
  readonly mde: number;
  /** P(ship) per comparison. */
  readonly shipRate: number;
  /** P(theta <= 0 | ship): share of shipped comparisons that are not real wins. */
  readonly falsePositiveRisk: number;
  /** E[y | ship] / E[theta | ship]: claimed over realized lift of shipped comparisons. */
  readonly exaggeration: number;
  /** Expected shipped comparisons per period. */
  readonly expectedShipped: number;
  /** Expected shipped comparisons with theta > 0, per period. */
  readonly expectedRealWins: number;
  /** Expected shipped comparisons with theta <= 0, per period. */
  readonly expectedFalseWins: number;
  /** Expected true lift shipped per period (sum of theta over shipped comparisons). */
  readonly expectedRealizedLift: number;
  /** Expected claimed lift shipped per period (sum of y over shipped comparisons). */
  readonly expectedClaimedLift: number;
  readonly valuePerTest: number;
  /** Expected value per period. */
  readonly expectedValue: number;
}

/** Evaluates a design; `mde` is the relative effect at which power is reported. */
export function evaluateDesign(
  program: ProgramEconomics,
  threshold: number,
  nPerArm: number,
  mde: number,
): DesignEvaluation {
  const standardError = standardErrorAt(program.metric, nPerArm);
  const liftThreshold = threshold * standardError;
  const whole = shippingPartial(program.prior, standardError, liftThreshold);
  const real = shippingPartial(program.prior, standardError, liftThreshold, 0, Number.POSITIVE_INFINITY);
  const claimed = expectedShippedEstimate(program.prior, standardError, liftThreshold);
  const tests = testsPerPeriod(program, nPerArm);
  const comparisons = tests * ideasPerTest(program);
  const perTest = valuePerTest(program, threshold, nPerArm);
  return {
    alpha: alphaFromThreshold(threshold),
    threshold,
    liftThreshold,
    nPerArm,
    standardError,
    days: runDays(program, nPerArm),
    testsPerPeriod: tests,
    power: normalCdf(mde / standardError - threshold),
    mde,
    shipRate: whole.probability,
    falsePositiveRisk:
      whole.probability > 0 ? (whole.probability - real.probability) / whole.probability : Number.NaN,
    exaggeration: whole.effectMoment > 0 ? claimed / whole.effectMoment : Number.NaN,
    expectedShipped: comparisons * whole.probability,
    expectedRealWins: comparisons * real.probability,
    expectedFalseWins: comparisons * (whole.probability - real.probability),
    expectedRealizedLift: comparisons * whole.effectMoment,
    expectedClaimedLift: comparisons * claimed,
    valuePerTest: perTest,
    expectedValue: tests * perTest,
  };
}

/**
 * n per arm of the textbook design: power `power` at the relative effect `mde` with two-sided
 * alpha, n = s_unit^2 (z_{1-alpha/2} + z_power)^2 / mde^2 (normal approximation, one tail;
 * common practice; e.g. Kohavi, Tang & Xu 2020, "Trustworthy Online Controlled Experiments",
 * ch. 17, chapter from memory).
 */
export function textbookSampleSize(metric: MetricScale, alpha: number, power: number, mde: number): number {
  const total = normalQuantile(1 - alpha / 2) + normalQuantile(power);
  const unit = unitStandardError(metric);
  return (unit * unit * total * total) / (mde * mde);
}
