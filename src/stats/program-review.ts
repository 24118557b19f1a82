/**
 * The program review: what a metric family's whole history says about the experimentation
 * program (statistics.md section 6). Pure: a list of tests, the prior fitted to them (and,
 * optionally, bootstrap refits and the fits of the other families) in; a plain result out.
 *
 * For the shipped set S and a practical threshold delta >= 0 (default 0):
 * - expected false wins sum_S P(theta_i <= delta | y_i), their share the estimated false discovery
 *   rate of what was shipped; expected sign errors sum_S P(theta_i < 0 | y_i);
 * - claimed total sum_S y_i (and compounded prod(1 + y_i) - 1) against the expected realized total
 *   sum_S E[theta_i | y_i]: realization ratio = realized / claimed, exaggeration factor = its inverse;
 * - Lee & Shen (2018)'s frequentist winner's-curse bias of the total beside the Bayesian one
 *   (claimed - expected realized);
 * - missed wins among the tests not shipped, sum P(theta_i > delta | y_i);
 * - the confusion matrix in expected counts (decision x truth), overall, by team and by quarter;
 * - per test: the shrunk lift, P(real win), lfsr, power and exaggeration at the prior's typical real
 *   win (Gelman & Carlin 2014), and flags;
 * - realized measurements against the posterior predictive; A/A false-positive rate (Clopper-Pearson),
 *   p-value histograms and KS uniformity; the caliper test (Gerber & Malhotra 2008).
 * Intervals of program figures are percentiles (R type 7) over priors refitted to bootstrap
 * resamples of the tests (statistics.md section 5, "Uncertainty of g"); the posterior of each test
 * is recomputed under each refit, on the observed data.
 */
import { type CaliperTestResult, caliperTest } from "./caliper-test.ts";
import { clopperPearsonInterval } from "./clopper-pearson.ts";
import { designAnalysis } from "./design-analysis.ts";
import { normalCdf, normalQuantile } from "./distributions.ts";
import { type EffectPrior, nullShare } from "./effect-prior.ts";
import { requireFinite, requireOpenUnit, StatsInputError } from "./errors.ts";
import { posteriorColumns, posteriorMixture, posteriorProbabilityAboveColumn } from "./posterior.ts";
import { type PosteriorSums, posteriorSumsUnderPriors } from "./posterior-sums.ts";
import { type PredictiveCalibration, predictiveCalibration } from "./predictive-calibration.ts";
import type { RandomSource } from "./random.ts";
import { shippingPartial } from "./shipping-expectation.ts";
import { kolmogorovSmirnovUniform, type UniformityTestResult } from "./uniformity-test.ts";
import { type WinnersCurseBias, winnersCurseBias } from "./winners-curse-bias.ts";

export type ReviewDecision = "shipped" | "not_shipped" | "iterate" | "pending";

/** One stored test result as the review reads it (lifts on the relative scale, positive = good). */
export interface ReviewTest {
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  /** e.g. "2026Q3"; null when the test has no date. */
  readonly quarter: string | null;
  readonly decision: ReviewDecision;
  readonly y: number;
  /** NaN or <= 0 marks a missing standard error (the test is left out). */
  readonly s: number;
  readonly isAa: boolean;
  readonly sampleRatioMismatch: boolean;
  readonly stoppedEarly: boolean;
  readonly realized?: {
    readonly estimate: number;
    readonly standardError: number;
    readonly method: string;
  } | null;
}

/** The parts of a PriorFit (fit-effect-prior.ts) the review uses. */
export interface ReviewPriorFit {
  readonly family: string;
  readonly prior: EffectPrior;
  readonly logLik: number;
  readonly converged: boolean;
  readonly nullWeight?: number;
}

export interface ProgramReviewSettings {
  /** Threshold delta for "false win" (theta <= delta); default 0. */
  readonly delta?: number;
  /** The practical threshold also reported (better identified than 0); default none. */
  readonly practicalThreshold?: number | null;
  /** Two-sided level of the launch rule; wins ship on the upper tail (default 0.05). */
  readonly alpha?: number;
  /** Caliper half-width as a share of the critical z (default 0.1). */
  readonly caliperWidth?: number;
  /** Interval level for program figures (default 0.95). */
  readonly level?: number;
  /** Bootstrap draws for Lee & Shen's interval (default defaultWinnersCurseReplicates). */
  readonly winnersCurseReplicates?: number;
  /** Power below which a test is flagged underpowered (default 0.5). */
  readonly underpoweredBelow?: number;
  /** A claim larger than this multiple of the typical real win is flagged extreme (default 3). */
  readonly extremeClaimMultiple?: number;
}

export interface ProgramReviewInput {
  /** The tests read (after the team / date filters), A/A and flagged ones included. */
  readonly tests: readonly ReviewTest[];
  /** The prior fitted to the family's included tests. */
  readonly fit: ReviewPriorFit;
  /** Priors refitted to bootstrap resamples, for intervals; empty means no intervals. */
  readonly bootstrapPriors?: readonly EffectPrior[];
  /** Fits of the other families, for the sensitivity table. */
  readonly alternativeFits?: readonly ReviewPriorFit[];
  readonly settings?: ProgramReviewSettings;
  /** Randomness for Lee & Shen's parametric bootstrap. */
  readonly random: RandomSource;
  /** Free text the caller adds to the assumptions (e.g. how tests were read and filtered). */
  readonly extraAssumptions?: readonly string[];
  /**
   * Whether to build the per-test table (default true); without it `tests` is empty and every
   * other figure is the same (a summary of a large history skips 1e5 rows it would drop).
   */
  readonly includeTests?: boolean;
  /**
   * The per-result kernels, for a caller that runs them on more threads with the same results
   * (src/threads); default posteriorColumns and posteriorSumsUnderPriors.
   */
  readonly kernels?: ReviewKernels;
}

export interface ReviewKernels {
  readonly posteriorColumns: typeof posteriorColumns;
  readonly posteriorSums: typeof posteriorSumsUnderPriors;
  /** P(theta > delta) per test when delta is not 0 (default posteriorProbabilityAboveColumn). */
  readonly probabilityAbove?: typeof posteriorProbabilityAboveColumn;
}

export interface Interval {
  readonly lower: number;
  readonly upper: number;
  readonly level: number;
}

export interface Estimate {
  readonly estimate: number;
  /** Bootstrap percentile interval over refitted priors; null without refits. */
  readonly interval: Interval | null;
}

export interface ConfusionMatrix {
  /** Expected counts: decision (shipped / not shipped) x truth (real win theta > delta / not). */
  readonly shippedRealWin: number;
  readonly shippedNotRealWin: number;
  readonly notShippedRealWin: number;
  readonly notShippedNotRealWin: number;
  readonly tests: number;
}

export interface ReviewTestRow {
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  readonly quarter: string | null;
  readonly decision: ReviewDecision;
  readonly claimed: number;
  readonly standardError: number;
  readonly z: number;
  readonly shrunk: number;
  readonly shrunkLower: number;
  readonly shrunkUpper: number;
  readonly probabilityRealWin: number;
  readonly probabilityFalseWin: number;
  readonly lfsr: number;
  readonly power: number;
  readonly exaggeration: number;
  readonly flags: readonly ReviewFlag[];
  readonly realized: number | null;
  readonly realizedStandardError: number | null;
}

export type ReviewFlag = "early_stop" | "sample_ratio_mismatch" | "underpowered" | "extreme_claim";

export interface HistogramBin {
  readonly lower: number;
  readonly upper: number;
  readonly count: number;
}

export interface SensitivityRow {
  readonly family: string;
  readonly chosen: boolean;
  readonly logLik: number;
  readonly nullShare: number;
  readonly expectedFalseWins: number;
  readonly falseDiscoveryRate: number;
  readonly expectedRealizedLift: number;
  readonly realizationRatio: number;
  readonly missedWins: number;
}

export interface ProgramReview {
  /** The prior family the figures use (the metric family is the caller's). */
  readonly priorFamily: string;
  readonly counts: {
    readonly tests: number;
    readonly included: number;
    readonly shipped: number;
    readonly notShipped: number;
    readonly pending: number;
    readonly leftOut: {
      readonly total: number;
      readonly aa: number;
      readonly sampleRatioMismatch: number;
      readonly missingStandardError: number;
    };
  };
  readonly shipped: number;
  readonly expectedRealWins: Estimate;
  readonly expectedFalseWins: Estimate;
  readonly falseDiscoveryRate: Estimate;
  readonly atPracticalThreshold: {
    readonly threshold: number;
    readonly expectedFalseWins: Estimate;
    readonly falseDiscoveryRate: Estimate;
  } | null;
  readonly expectedSignErrors: Estimate;
  readonly claimedTotalLift: { readonly sum: number; readonly compounded: number };
  readonly expectedRealizedLift: {
    readonly sum: number;
    readonly compounded: number;
    readonly interval: Interval | null;
  };
  readonly realizationRatio: Estimate;
  readonly exaggerationFactor: Estimate;
  readonly winnersCurseBias: {
    readonly frequentist: WinnersCurseBias;
    /** claimed total - expected realized total, with the refit interval. */
    readonly bayesian: Estimate;
  };
  readonly missedWins: Estimate & { readonly notShipped: number };
  readonly confusionMatrix: {
    readonly overall: ConfusionMatrix;
    readonly byTeam: readonly (ConfusionMatrix & { readonly team: string })[];
    readonly byQuarter: readonly (ConfusionMatrix & { readonly quarter: string })[];
  };
  readonly prior: {
    readonly family: string;
    readonly logLik: number;
    readonly converged: boolean;
    readonly nullWeight: number | null;
    readonly nullShare: number;
    /** Mean size of real wins under the prior, E[theta | theta > delta]. */
    readonly typicalRealWin: number;
    readonly shareOfRealWins: number;
  };
  readonly tests: readonly ReviewTestRow[];
  readonly realized: (Omit<PredictiveCalibration, "pit"> & { readonly pit: readonly number[] }) | null;
  readonly aa: {
    readonly count: number;
    readonly falsePositives: number;
    readonly falsePositiveRate: number;
    readonly alpha: number;
    readonly interval: Interval | null;
    readonly pValueHistogram: readonly HistogramBin[];
    readonly uniformity: UniformityTestResult | null;
  };
  readonly pValueHistogram: readonly HistogramBin[];
  readonly caliper: CaliperTestResult;
  readonly sensitivity: readonly SensitivityRow[];
  readonly assumptions: {
    readonly family: string;
    readonly nullWeight: number | null;
    readonly delta: number;
    readonly practicalThreshold: number | null;
    readonly alpha: number;
    readonly criticalZ: number;
    readonly bootstrapRefits: number;
    readonly leftOut: {
      readonly aa: number;
      readonly sampleRatioMismatch: number;
      readonly missingStandardError: number;
    };
    readonly statements: readonly string[];
  };
  readonly cautions: readonly string[];
}

/**
 * Parametric bootstrap draws behind Lee & Shen's interval below momentsFromTests tests (from there
 * on the interval comes from the bootstrap distribution's exact moments, winners-curse-bias.ts).
 * The bias is a sum over every test, so its bootstrap distribution is close to normal and 200
 * draws place 2.5 % / 97.5 % percentiles well enough for a second opinion (Efron & Tibshirani
 * 1993, ch. 13, suggest B >= 1000 for precise percentile intervals).
 */
export const defaultWinnersCurseReplicates = 200;

export const reviewCautions: readonly string[] = [
  "Estimates assume the tests are comparable draws from one program (one distribution of true effects per metric family).",
  "These estimates do not replace a statistician's review of the program or of any single test.",
  "Not for clinical or safety-critical decisions.",
];

const shipDecisions: ReadonlySet<ReviewDecision> = new Set(["shipped"]);
const notShipDecisions: ReadonlySet<ReviewDecision> = new Set(["not_shipped", "iterate"]);

function quantileOfSorted(sorted: readonly number[], probability: number): number {
  // R quantile type 7.
  const position = (sorted.length - 1) * probability;
  const below = Math.floor(position);
  const above = Math.min(sorted.length - 1, below + 1);
  const fraction = position - below;
  return (sorted[below] as number) * (1 - fraction) + (sorted[above] as number) * fraction;
}

function percentileInterval(draws: readonly number[], level: number): Interval | null {
  const finite = draws.filter(Number.isFinite).sort((a, b) => a - b);
  if (finite.length < 2) return null;
  const tail = (1 - level) / 2;
  return { lower: quantileOfSorted(finite, tail), upper: quantileOfSorted(finite, 1 - tail), level };
}

/** Expected sums over a prior: the quantities every headline figure is built from. */
interface ProgramSums {
  readonly falseWins: number;
  readonly falseWinsPractical: number;
  readonly signErrors: number;
  readonly realizedSum: number;
  readonly missedWins: number;
}

/** The tests of one decision in columns, prepared once for every prior evaluated on them. */
interface TestColumns {
  readonly y: Float64Array;
  readonly s: Float64Array;
}

function testColumns(tests: readonly ReviewTest[]): TestColumns {
  // A plain loop: Float64Array.from with a mapping function is several times slower.
  const y = new Float64Array(tests.length);
  const s = new Float64Array(tests.length);
  for (let i = 0; i < tests.length; i++) {
    y[i] = (tests[i] as ReviewTest).y;
    s[i] = (tests[i] as ReviewTest).s;
  }
  return { y, s };
}

/**
 * The program sums under each of several priors: bootstrap refits share the fit's components, so
 * each test's component figures are computed once for all of them (posterior-sums.ts).
 */
function programSumsUnderRefits(
  priors: readonly EffectPrior[],
  shipped: TestColumns,
  notShipped: TestColumns,
  delta: number,
  practical: number | null,
  posteriorSums: typeof posteriorSumsUnderPriors,
): ProgramSums[] {
  const thresholds = practical === null ? [delta] : [delta, practical];
  const shippedSums = posteriorSums(priors, shipped.y, shipped.s, thresholds);
  const notShippedSums = posteriorSums(priors, notShipped.y, notShipped.s, [delta]);
  const count = shipped.y.length;
  return priors.map((_, b) => {
    const onShipped = shippedSums[b] as PosteriorSums;
    return {
      falseWins: count - (onShipped.probAbove[0] as number),
      falseWinsPractical: practical === null ? 0 : count - (onShipped.probAbove[1] as number),
      signErrors: onShipped.probNegative,
      realizedSum: onShipped.mean,
      missedWins: (notShippedSums[b] as PosteriorSums).probAbove[0] as number,
    };
  });
}

function histogram(values: readonly number[], bins: number): HistogramBin[] {
  const counts = new Array<number>(bins).fill(0);
  for (const value of values) {
    const bin = Math.min(bins - 1, Math.max(0, Math.floor(value * bins)));
    counts[bin] = (counts[bin] as number) + 1;
  }
  return counts.map((count, index) => ({ lower: index / bins, upper: (index + 1) / bins, count }));
}

function twoSidedPValue(y: number, s: number): number {
  return 2 * normalCdf(-Math.abs(y / s));
}

function emptyMatrix(): { -readonly [K in keyof ConfusionMatrix]: number } {
  return { shippedRealWin: 0, shippedNotRealWin: 0, notShippedRealWin: 0, notShippedNotRealWin: 0, tests: 0 };
}

/** The program review of one metric family (statistics.md section 6). */
export function programReview(input: ProgramReviewInput): ProgramReview {
  const settings = input.settings ?? {};
  const delta = settings.delta ?? 0;
  const practical = settings.practicalThreshold ?? null;
  const alpha = settings.alpha ?? 0.05;
  const level = settings.level ?? 0.95;
  const underpoweredBelow = settings.underpoweredBelow ?? 0.5;
  const extremeClaimMultiple = settings.extremeClaimMultiple ?? 3;
  requireFinite("delta", delta);
  if (delta < 0) throw new StatsInputError("delta", "0 or more", delta);
  if (practical !== null) {
    requireFinite("practicalThreshold", practical);
    if (practical < 0) throw new StatsInputError("practicalThreshold", "0 or more", practical);
  }
  requireOpenUnit("alpha", alpha);
  requireOpenUnit("level", level);
  requireOpenUnit("underpoweredBelow", underpoweredBelow);
  if (!(extremeClaimMultiple > 1))
    throw new StatsInputError("extremeClaimMultiple", "above 1", extremeClaimMultiple);
  const criticalZ = normalQuantile(1 - alpha / 2);
  const prior = input.fit.prior;
  const kernels: ReviewKernels = input.kernels ?? {
    posteriorColumns,
    posteriorSums: posteriorSumsUnderPriors,
  };
  const bootstrapPriors = input.bootstrapPriors ?? [];

  // Who is left out, and why (one reason per test, in this order).
  let aaCount = 0;
  let srmCount = 0;
  let missingSeCount = 0;
  const aaTests: ReviewTest[] = [];
  const included: ReviewTest[] = [];
  for (const test of input.tests) {
    const hasSe = Number.isFinite(test.s) && test.s > 0 && Number.isFinite(test.y);
    if (test.isAa) {
      aaCount++;
      if (hasSe) aaTests.push(test);
    } else if (!hasSe) missingSeCount++;
    else if (test.sampleRatioMismatch) srmCount++;
    else included.push(test);
  }
  const shipped = included.filter((test) => shipDecisions.has(test.decision));
  const notShipped = included.filter((test) => notShipDecisions.has(test.decision));
  const pending = included.length - shipped.length - notShipped.length;

  // The prior's typical real win: E[theta | theta > delta] (exact over the prior's components).
  const realPart = shippingPartial(prior, 1, Number.NEGATIVE_INFINITY, delta, Number.POSITIVE_INFINITY);
  const typicalRealWin = realPart.probability > 0 ? realPart.effectMoment / realPart.probability : Number.NaN;

  // One row of the per-test table: the test, its posterior, power and exaggeration at the prior's
  // typical real win (Gelman & Carlin 2014), and its flags.
  const includeTests = input.includeTests ?? true;
  const testRow = (
    test: ReviewTest,
    posterior: { mean: number; lower: number; upper: number; lfsr: number },
    probabilityRealWin: number,
  ): ReviewTestRow => {
    const design =
      Number.isFinite(typicalRealWin) && typicalRealWin > 0
        ? designAnalysis({ effect: typicalRealWin, standardError: test.s, alpha })
        : null;
    const flags: ReviewFlag[] = [];
    if (test.stoppedEarly) flags.push("early_stop");
    if (test.sampleRatioMismatch) flags.push("sample_ratio_mismatch");
    if (design && design.power < underpoweredBelow) flags.push("underpowered");
    if (
      Number.isFinite(typicalRealWin) &&
      test.y > extremeClaimMultiple * typicalRealWin &&
      test.y / test.s > criticalZ
    ) {
      flags.push("extreme_claim");
    }
    const realized = test.realized ?? null;
    return {
      key: test.key,
      name: test.name,
      team: test.team,
      quarter: test.quarter,
      decision: test.decision,
      claimed: test.y,
      standardError: test.s,
      z: test.y / test.s,
      shrunk: posterior.mean,
      shrunkLower: posterior.lower,
      shrunkUpper: posterior.upper,
      probabilityRealWin,
      probabilityFalseWin: 1 - probabilityRealWin,
      lfsr: posterior.lfsr,
      power: design ? design.power : Number.NaN,
      exaggeration: design ? design.exaggeration : Number.NaN,
      flags,
      realized: realized ? realized.estimate : null,
      realizedStandardError: realized ? realized.standardError : null,
    };
  };

  // Per-test posteriors under the chosen prior.
  const rows: ReviewTestRow[] = [];
  const overall = emptyMatrix();
  const byTeam = new Map<string, ReturnType<typeof emptyMatrix>>();
  const byQuarter = new Map<string, ReturnType<typeof emptyMatrix>>();
  const realizedComparisons: Parameters<typeof predictiveCalibration>[0][number][] = [];
  const includedColumns = testColumns(included);
  const includedPosteriors = kernels.posteriorColumns(prior, includedColumns.y, includedColumns.s, level);
  const includedIndex = new Map(included.map((test, index) => [test, index]));
  // P(theta > delta) for every included test in one batch (only needed when delta is not 0).
  const includedAboveDelta =
    delta === 0
      ? null
      : (kernels.probabilityAbove ?? posteriorProbabilityAboveColumn)(
          prior,
          includedColumns.y,
          includedColumns.s,
          delta,
        );
  for (const [index, test] of included.entries()) {
    const posterior = {
      mean: includedPosteriors.mean[index] as number,
      lower: includedPosteriors.lower[index] as number,
      upper: includedPosteriors.upper[index] as number,
      probPositive: includedPosteriors.probPositive[index] as number,
      lfsr: includedPosteriors.lfsr[index] as number,
    };
    const probabilityRealWin =
      includedAboveDelta === null ? posterior.probPositive : (includedAboveDelta[index] as number);
    const realized = test.realized ?? null;
    if (includeTests) rows.push(testRow(test, posterior, probabilityRealWin));
    const isShipped = shipDecisions.has(test.decision);
    const isNotShipped = notShipDecisions.has(test.decision);
    if (isShipped || isNotShipped) {
      const matrices = [overall];
      const team = test.team ?? "(no team)";
      const quarter = test.quarter ?? "(no date)";
      if (!byTeam.has(team)) byTeam.set(team, emptyMatrix());
      if (!byQuarter.has(quarter)) byQuarter.set(quarter, emptyMatrix());
      matrices.push(
        byTeam.get(team) as ReturnType<typeof emptyMatrix>,
        byQuarter.get(quarter) as ReturnType<typeof emptyMatrix>,
      );
      for (const matrix of matrices) {
        matrix.tests++;
        if (isShipped) {
          matrix.shippedRealWin += probabilityRealWin;
          matrix.shippedNotRealWin += 1 - probabilityRealWin;
        } else {
          matrix.notShippedRealWin += probabilityRealWin;
          matrix.notShippedNotRealWin += 1 - probabilityRealWin;
        }
      }
    }
    if (realized && Number.isFinite(realized.estimate) && realized.standardError > 0) {
      realizedComparisons.push({
        claimed: test.y,
        shrunk: posterior.mean,
        posterior: posteriorMixture(prior, test.y, test.s),
        realized: realized.estimate,
        realizedStandardError: realized.standardError,
      });
    }
  }

  // Headline sums under the fit and under each refit.
  const shippedColumns = testColumns(shipped);
  const notShippedColumns = testColumns(notShipped);
  // The fit, its refits and the other families' fits in one pass: the refits share the fit's
  // components, so each test's component figures are computed once for all of them.
  const sensitivityFits = [input.fit, ...(input.alternativeFits ?? [])].filter(
    (fit, index, all) => all.findIndex((other) => other.family === fit.family) === index,
  );
  const otherFits = sensitivityFits.filter((fit) => fit !== input.fit);
  const allSums = programSumsUnderRefits(
    [prior, ...bootstrapPriors, ...otherFits.map((fit) => fit.prior)],
    shippedColumns,
    notShippedColumns,
    delta,
    practical,
    kernels.posteriorSums,
  );
  const main = allSums[0] as ProgramSums;
  const refits = allSums.slice(1, 1 + bootstrapPriors.length);
  const otherSums = new Map(
    otherFits.map((fit, index) => [fit, allSums[1 + bootstrapPriors.length + index] as ProgramSums]),
  );
  const shippedMeans = Float64Array.from(
    shipped,
    (test) => includedPosteriors.mean[includedIndex.get(test) as number] as number,
  );
  const claimedSum = shipped.reduce((total, test) => total + test.y, 0);
  const claimedCompounded = shipped.reduce((product, test) => product * (1 + test.y), 1) - 1;
  const shippedCount = shipped.length;
  const ratio = (sums: ProgramSums) => sums.realizedSum / claimedSum;
  const estimate = (value: number, draw: (sums: ProgramSums) => number): Estimate => ({
    estimate: value,
    interval: refits.length > 0 ? percentileInterval(refits.map(draw), level) : null,
  });
  const fdr = (falseWins: number) => (shippedCount > 0 ? falseWins / shippedCount : Number.NaN);

  // Expected realized compounded: the product of (1 + E[theta | y]), a first-order approximation
  // (E prod != prod E when effects are uncertain; for lifts of a few percent the gap is negligible).
  const realizedCompounded = shippedMeans.reduce((product, mean) => product * (1 + mean), 1) - 1;

  const random = input.random;
  const frequentist = winnersCurseBias(
    included.map((test) => ({ y: test.y, s: test.s })),
    {
      thresholdZ: criticalZ,
      replicates: settings.winnersCurseReplicates ?? defaultWinnersCurseReplicates,
      random,
      level,
    },
  );

  // A/A tests: two-sided p-values; a false positive is p < alpha (both tails count for A/A).
  const aaPValues = aaTests.map((test) => twoSidedPValue(test.y, test.s));
  const aaFalsePositives = aaPValues.filter((p) => p < alpha).length;
  const aaInterval =
    aaPValues.length > 0 ? clopperPearsonInterval(aaFalsePositives, aaPValues.length, level) : null;

  const primaryPValues = included.map((test) => twoSidedPValue(test.y, test.s));
  const realizedCalibration =
    realizedComparisons.length > 0 ? predictiveCalibration(realizedComparisons, { level }) : null;

  const sensitivity: SensitivityRow[] = sensitivityFits.map((fit) => {
    const sums = fit === input.fit ? main : (otherSums.get(fit) as ProgramSums);
    return {
      family: fit.family,
      chosen: fit === input.fit,
      logLik: fit.logLik,
      nullShare: nullShare(fit.prior),
      expectedFalseWins: sums.falseWins,
      falseDiscoveryRate: fdr(sums.falseWins),
      expectedRealizedLift: sums.realizedSum,
      realizationRatio: ratio(sums),
      missedWins: sums.missedWins,
    };
  });

  const leftOut = { aa: aaCount, sampleRatioMismatch: srmCount, missingStandardError: missingSeCount };
  const statements = [
    `Prior family "${input.fit.family}" fitted by marginal likelihood to the family's included tests${input.fit.nullWeight ? ` with null weight ${input.fit.nullWeight} (a penalty favouring the point mass at zero)` : ""}.`,
    `A false win is a shipped test with true effect <= ${delta}; a real win has true effect > ${delta}${practical !== null ? `; false wins are also reported at the practical threshold ${practical}` : ""}.`,
    `Wins ship on the upper tail of a two-sided test at alpha = ${alpha} (critical z = ${criticalZ.toFixed(4)}); Lee & Shen's bias uses that threshold for every test.`,
    `Left out: ${aaCount} A/A tests (used only for the pipeline checks), ${srmCount} with a sample ratio mismatch, ${missingSeCount} without a standard error.`,
    `Pending tests (${pending}) are neither shipped nor not shipped and only enter the per-test table.`,
    `Typical real win = mean size of real wins under the prior, E[theta | theta > ${delta}] = ${Number(typicalRealWin.toPrecision(4))}; power and exaggeration per test are at that effect (Gelman & Carlin 2014).`,
    `Flags: early_stop = stopped before the planned sample; sample_ratio_mismatch = arm counts failed the allocation check; underpowered = power at the typical real win below ${underpoweredBelow}; extreme_claim = significant claim above ${extremeClaimMultiple} x the typical real win.`,
    `Intervals of program figures: ${Math.round(level * 100)} % percentile intervals over ${bootstrapPriors.length} priors refitted to bootstrap resamples of the tests${bootstrapPriors.length === 0 ? " (none requested: no intervals)" : ""}.`,
    "Compounded totals multiply (1 + lift); the expected realized compounded total multiplies (1 + posterior mean), a first-order approximation.",
    "Caliper test on signed z = y / s; A/A false positives are two-sided p < alpha.",
    ...(input.extraAssumptions ?? []),
  ];

  const matrixRows = <K extends string>(map: Map<string, ReturnType<typeof emptyMatrix>>, key: K) =>
    [...map.entries()]
      .sort(([a], [b]) => a.localeCompare(b))
      .map(([name, matrix]) => ({ [key]: name, ...matrix }) as ConfusionMatrix & Record<K, string>);

  return {
    priorFamily: input.fit.family,
    counts: {
      tests: input.tests.length,
      included: included.length,
      shipped: shippedCount,
      notShipped: notShipped.length,
      pending,
      leftOut: { total: aaCount + srmCount + missingSeCount, ...leftOut },
    },
    shipped: shippedCount,
    expectedRealWins: estimate(shippedCount - main.falseWins, (sums) => shippedCount - sums.falseWins),
    expectedFalseWins: estimate(main.falseWins, (sums) => sums.falseWins),
    falseDiscoveryRate: estimate(fdr(main.falseWins), (sums) => fdr(sums.falseWins)),
    atPracticalThreshold:
      practical === null
        ? null
        : {
            threshold: practical,
            expectedFalseWins: estimate(main.falseWinsPractical, (sums) => sums.falseWinsPractical),
            falseDiscoveryRate: estimate(fdr(main.falseWinsPractical), (sums) =>
              fdr(sums.falseWinsPractical),
            ),
          },
    expectedSignErrors: estimate(main.signErrors, (sums) => sums.signErrors),
    claimedTotalLift: { sum: claimedSum, compounded: claimedCompounded },
    expectedRealizedLift: {
      sum: main.realizedSum,
      compounded: realizedCompounded,
      interval:
        refits.length > 0
          ? percentileInterval(
              refits.map((sums) => sums.realizedSum),
              level,
            )
          : null,
    },
    realizationRatio: estimate(ratio(main), ratio),
    exaggerationFactor: estimate(1 / ratio(main), (sums) => 1 / ratio(sums)),
    winnersCurseBias: {
      frequentist,
      bayesian: estimate(claimedSum - main.realizedSum, (sums) => claimedSum - sums.realizedSum),
    },
    missedWins: { ...estimate(main.missedWins, (sums) => sums.missedWins), notShipped: notShipped.length },
    confusionMatrix: {
      overall,
      byTeam: matrixRows(byTeam, "team"),
      byQuarter: matrixRows(byQuarter, "quarter"),
    },
    prior: {
      family: input.fit.family,
      logLik: input.fit.logLik,
      converged: input.fit.converged,
      nullWeight: input.fit.nullWeight ?? null,
      nullShare: nullShare(prior),
      typicalRealWin,
      shareOfRealWins: realPart.probability,
    },
    tests: rows,
    realized: realizedCalibration,
    aa: {
      count: aaPValues.length,
      falsePositives: aaFalsePositives,
      falsePositiveRate: aaPValues.length > 0 ? aaFalsePositives / aaPValues.length : Number.NaN,
      alpha,
      interval: aaInterval ? { lower: aaInterval.lower, upper: aaInterval.upper, level } : null,
      pValueHistogram: histogram(aaPValues, 20),
      uniformity: aaPValues.length > 0 ? kolmogorovSmirnovUniform(aaPValues) : null,
    },
    pValueHistogram: histogram(primaryPValues, 20),
    caliper: caliperTest(
      included.map((test) => test.y / test.s),
      { criticalZ, width: settings.caliperWidth ?? 0.1 },
    ),
    sensitivity,
    assumptions: {
      family: input.fit.family,
      nullWeight: input.fit.nullWeight ?? null,
      delta,
      practicalThreshold: practical,
      alpha,
      criticalZ,
      bootstrapRefits: bootstrapPriors.length,
      leftOut,
      statements,
    },
    cautions: reviewCautions,
  };
}
