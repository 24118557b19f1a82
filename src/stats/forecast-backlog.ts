/**
 * Backlog forecast (statistics.md section 8): what a set of planned tests will deliver under a
 * decision rule. R portfolios are simulated with a seeded generator: for each planned test i,
 * theta_i ~ g_i (its metric family's prior), y_i ~ N(theta_i, s_i^2), and the test ships when
 * y_i > z* s_i (statistics.md section 7). Per portfolio it counts
 * - shipped: tests shipped;
 * - realWins: shipped tests with theta_i > 0; falseWins: shipped tests with theta_i <= 0
 *   (nulls and losses);
 * - claimedLift: sum of y_i over shipped tests; realizedLift: sum of theta_i over shipped tests;
 *   liftGap = claimed - realized (totals of relative lifts, added, not compounded);
 * and reports their mean, Monte Carlo error and 5/25/50/75/95 % quantiles, overall, per team and
 * per metric family, with P(realized >= target).
 *
 * Several rules are simulated on the SAME draws of theta and noise (common random numbers), so
 * the difference between two rules carries no independent simulation noise.
 * Analytic expectations (E[shipped] = sum P(ship_i), E[realized] = sum E[theta_i 1{ship_i}],
 * E[real wins] = sum P(ship_i, theta_i > 0)) are computed exactly (src/stats/shipping-expectation.ts)
 * beside the simulated means, as a built-in check.
 *
 * Cost: O(R N K) time for R portfolios, N tests and K rules; memory O(R K G) for G groups.
 * The simulation runs in steps (`advance`) so that callers can yield to an event loop.
 */
import { normalSurvival } from "./distributions.ts";
import type { EffectPrior } from "./effect-prior.ts";
import { requireFinite, requirePositive, StatsInputError } from "./errors.ts";
import { type DrawSummary, drawSummary } from "./forecast-quantiles.ts";
import { createPriorSampler, type PriorSampler } from "./prior-sampling.ts";
import { createRandom } from "./random.ts";
import * as shippingExpectation from "./shipping-expectation.ts";

export interface ForecastPlannedTest {
  readonly name: string;
  readonly team: string;
  /** The metric family whose prior the test draws from. */
  readonly family: string;
  readonly prior: EffectPrior;
  /**
   * Bootstrap refits of the family's prior (src/stats/bootstrap-prior.ts), to carry the prior's
   * own uncertainty into the ranges: each simulated quarter draws one refit, uniformly, shared
   * by every test holding the same array, and those tests' true effects from it. Absent: `prior`
   * is taken as known.
   */
  readonly priorReplicates?: readonly EffectPrior[] | null;
  /** SE of the test's relative lift. */
  readonly standardError: number;
}

export interface ForecastRule {
  readonly label: string;
  /** One-sided critical value z*: ship when y > z* s. One for all tests, or one per test. */
  readonly criticalValue: number | readonly number[];
}

/**
 * Analytic shipping expectations for one test (contract of src/stats/shipping-expectation.ts;
 * thresholds on the lift scale, i.e. z* s).
 */
export interface ShippingExpectations {
  probabilityOfShipping(prior: EffectPrior, standardError: number, threshold: number): number;
  expectedShippedEffect(prior: EffectPrior, standardError: number, threshold: number): number;
  probabilityOfShippingAbove(
    prior: EffectPrior,
    standardError: number,
    threshold: number,
    effectAbove: number,
  ): number;
  /** Prior predictive density of the estimate y at `at` (for E[(y - theta) 1{ship}] = s^2 f_Y(t)). */
  predictiveDensity(prior: EffectPrior, standardError: number, at: number): number;
}

export interface BacklogForecastInput {
  readonly tests: readonly ForecastPlannedTest[];
  /** At least one rule; the first is the headline, the others are compared with it. */
  readonly rules: readonly ForecastRule[];
  /** Number of simulated portfolios R (default 10000). */
  readonly simulations?: number;
  /** A 32-bit integer seed (createRandom). */
  readonly seed: number;
  /** Target realized total lift for P(realized >= target); none when absent. */
  readonly target?: number | null;
  /** Exact expectations (default: src/stats/shipping-expectation.ts); null leaves them out. */
  readonly expectations?: ShippingExpectations | null;
}

export interface OutcomeSummary extends DrawSummary {
  /** Analytic expectation of the mean, where one exists (null otherwise). */
  readonly expected: number | null;
}

export interface OutcomeSummaries {
  readonly shipped: OutcomeSummary;
  readonly realWins: OutcomeSummary;
  readonly falseWins: OutcomeSummary;
  readonly claimedLift: OutcomeSummary;
  readonly realizedLift: OutcomeSummary;
  readonly liftGap: OutcomeSummary;
}

export interface ProbabilityEstimate {
  readonly estimate: number;
  /** Binomial Monte Carlo error sqrt(p (1 - p) / R). */
  readonly monteCarloError: number;
}

export interface GroupForecast extends OutcomeSummaries {
  readonly name: string;
  readonly tests: number;
}

export interface PlannedTestForecast {
  readonly name: string;
  readonly team: string;
  readonly family: string;
  readonly standardError: number;
  readonly criticalValue: number;
  /** Ship threshold on the lift scale, z* s. */
  readonly threshold: number;
  readonly simulatedShipShare: number;
  readonly probabilityOfShipping: number | null;
  readonly expectedShippedEffect: number | null;
}

export interface RuleForecast extends OutcomeSummaries {
  readonly label: string;
  /** The common z* when every test has the same one; null when they differ. */
  readonly criticalValue: number | null;
  /** The two-sided alpha equivalent to that z*, 2 (1 - Phi(z*)). */
  readonly alpha: number | null;
  readonly probabilityToReachTarget: ProbabilityEstimate | null;
  readonly byTeam: readonly GroupForecast[];
  readonly byFamily: readonly GroupForecast[];
  readonly tests: readonly PlannedTestForecast[];
}

export interface RuleDifference extends OutcomeSummaries {
  /** `label` minus `baseline`, portfolio by portfolio on the same draws. */
  readonly label: string;
  readonly baseline: string;
  /** P(realized under `label` >= realized under `baseline`). */
  readonly probabilityRealizedAtLeastBaseline: ProbabilityEstimate;
}

export interface BacklogForecast {
  readonly seed: number;
  readonly simulations: number;
  readonly target: number | null;
  readonly rules: readonly RuleForecast[];
  /** Each later rule against the first, on common random numbers. */
  readonly differences: readonly RuleDifference[];
  readonly assumptions: readonly string[];
  readonly cautions: readonly string[];
}

export interface BacklogSimulation {
  readonly simulations: number;
  /** Portfolios simulated so far. */
  completed(): number;
  /** Simulates up to `count` more portfolios; returns how many are done in total. */
  advance(count: number): number;
  /** Summarises; throws if the simulation has not completed. */
  finish(): BacklogForecast;
  /** The same summary in steps: each `next()` does one summary (one sort of R values) or one exact expectation. */
  finishInSteps(): Generator<void, BacklogForecast, void>;
}

export const defaultForecastSimulations = 10_000;

const quantityCount = 5;
const shippedSlot = 0;
const realWinSlot = 1;
const falseWinSlot = 2;
const claimedSlot = 3;
const realizedSlot = 4;

/**
 * Most figures a forecast keeps (every simulated quarter's 5 figures per rule and per group:
 * the whole backlog, each team, each family), so that quantiles are exact: 100 M doubles, 800 MB.
 */
export const maximumStoredForecastFigures = 100_000_000;

/** Figures kept per simulated quarter: 5 per rule and group (whole backlog, teams, families). */
export function storedFiguresPerQuarter(
  tests: readonly { readonly team: string; readonly family: string }[],
  ruleCount: number,
): number {
  const groups =
    1 + new Set(tests.map((test) => test.team)).size + new Set(tests.map((test) => test.family)).size;
  return ruleCount * groups * quantityCount;
}

export const forecastCautions: readonly string[] = [
  "This forecast does not replace a statistician's review; it is not for clinical or safety-critical decisions.",
  "It takes each family's prior as known: the uncertainty of a fitted prior is not carried into these ranges.",
  "Planned tests are treated as independent and run as planned; interactions, early stopping and changed plans are not modelled.",
];

/** The cautions when some tests draw their prior from bootstrap refits. */
export const forecastCautionsWithReplicates: readonly string[] = [
  forecastCautions[0]!,
  "Fitted priors are drawn from bootstrap refits, one per simulated quarter, so their uncertainty is in these ranges; the bootstrap does not see a history that is unrepresentative of the plan, and assumed priors and overrides are taken as known.",
  forecastCautions[2]!,
];

/** Validates the input and prepares a stepwise simulation. */
export function createBacklogSimulation(input: BacklogForecastInput): BacklogSimulation {
  const simulations = input.simulations ?? defaultForecastSimulations;
  if (!Number.isInteger(simulations) || simulations < 2 || simulations > 10_000_000) {
    throw new StatsInputError("simulations", "an integer from 2 to 10000000", simulations);
  }
  if (!Number.isInteger(input.seed) || input.seed < -2147483648 || input.seed > 2147483647) {
    throw new StatsInputError("seed", "a 32-bit integer", input.seed);
  }
  const target = input.target ?? null;
  if (target !== null) requireFinite("target", target);
  const tests = input.tests;
  if (tests.length === 0) throw new StatsInputError("tests", "at least one planned test", 0);
  const rules = input.rules;
  if (rules.length === 0) throw new StatsInputError("rules", "at least one rule", 0);

  const testCount = tests.length;
  const standardErrors = new Float64Array(testCount);
  const samplers: PriorSampler[] = [];
  const samplerByPrior = new Map<EffectPrior, PriorSampler>();
  const samplerOf = (prior: EffectPrior): PriorSampler => {
    let sampler = samplerByPrior.get(prior);
    if (!sampler) {
      sampler = createPriorSampler(prior);
      samplerByPrior.set(prior, sampler);
    }
    return sampler;
  };
  // Tests holding the same replicate array share one draw of the refit per quarter.
  const replicateSets: (readonly EffectPrior[])[] = [];
  const replicateSamplers: PriorSampler[][] = [];
  const replicateSetOfTest = new Int32Array(testCount).fill(-1);
  for (const [index, test] of tests.entries()) {
    requirePositive(`tests[${index}].standardError`, test.standardError);
    standardErrors[index] = test.standardError;
    samplers.push(samplerOf(test.prior));
    const replicates = test.priorReplicates ?? null;
    if (replicates === null) continue;
    if (replicates.length === 0)
      throw new StatsInputError(`tests[${index}].priorReplicates`, "at least one prior when given", 0);
    let set = replicateSets.indexOf(replicates);
    if (set < 0) {
      set = replicateSets.length;
      replicateSets.push(replicates);
      replicateSamplers.push(replicates.map(samplerOf));
    }
    replicateSetOfTest[index] = set;
  }
  const chosenReplicate = new Int32Array(replicateSets.length);

  const criticalValues = rules.map((rule, ruleIndex) => {
    const values = new Float64Array(testCount);
    for (let index = 0; index < testCount; index++) {
      const value = typeof rule.criticalValue === "number" ? rule.criticalValue : rule.criticalValue[index];
      if (value === undefined || Number.isNaN(value)) {
        throw new StatsInputError(
          `rules[${ruleIndex}].criticalValue[${index}]`,
          "a number",
          value ?? "missing",
        );
      }
      values[index] = value;
    }
    return values;
  });
  const thresholds = criticalValues.map((values) =>
    values.map((value, index) => value * standardErrors[index]!),
  );

  const teamNames = [...new Set(tests.map((test) => test.team))];
  const familyNames = [...new Set(tests.map((test) => test.family))];
  const groupCount = 1 + teamNames.length + familyNames.length;
  const teamGroup = Int32Array.from(tests, (test) => 1 + teamNames.indexOf(test.team));
  const familyGroup = Int32Array.from(
    tests,
    (test) => 1 + teamNames.length + familyNames.indexOf(test.family),
  );

  const ruleCount = rules.length;
  const accumulatorLength = ruleCount * groupCount * quantityCount;
  if (accumulatorLength * simulations > maximumStoredForecastFigures) {
    throw new StatsInputError(
      "simulations",
      `at most ${Math.floor(maximumStoredForecastFigures / accumulatorLength)} for ${ruleCount} rule(s) over ${teamNames.length} team(s) and ${familyNames.length} metric family(ies): each simulated quarter keeps ${accumulatorLength} figures and a forecast holds at most ${maximumStoredForecastFigures}`,
      simulations,
    );
  }
  const accumulator = new Float64Array(accumulatorLength);
  // draws[slot * simulations + r]; slot = (rule * groupCount + group) * quantityCount + quantity.
  const draws = new Float64Array(accumulatorLength * simulations);
  const shipCounts = new Float64Array(ruleCount * testCount);
  const random = createRandom(input.seed);
  let done = 0;

  const advance = (count: number): number => {
    const end = Math.min(simulations, done + Math.max(0, Math.floor(count)));
    for (let r = done; r < end; r++) {
      accumulator.fill(0);
      for (let set = 0; set < replicateSets.length; set++)
        chosenReplicate[set] = random.integer(replicateSets[set]!.length);
      for (let index = 0; index < testCount; index++) {
        const set = replicateSetOfTest[index]!;
        const theta =
          set < 0 ? samplers[index]!(random) : replicateSamplers[set]![chosenReplicate[set]!]!(random);
        const estimate = theta + standardErrors[index]! * random.normal();
        const winSlot = theta > 0 ? realWinSlot : falseWinSlot;
        for (let rule = 0; rule < ruleCount; rule++) {
          if (!(estimate > thresholds[rule]![index]!)) continue;
          shipCounts[rule * testCount + index]! += 1;
          const ruleBase = rule * groupCount;
          addShipped(accumulator, ruleBase * quantityCount, winSlot, estimate, theta);
          addShipped(accumulator, (ruleBase + teamGroup[index]!) * quantityCount, winSlot, estimate, theta);
          addShipped(accumulator, (ruleBase + familyGroup[index]!) * quantityCount, winSlot, estimate, theta);
        }
      }
      for (let slot = 0; slot < accumulatorLength; slot++) draws[slot * simulations + r] = accumulator[slot]!;
    }
    done = end;
    return done;
  };

  // Summarising sorts every kept series (O(R log R) each): it runs as a generator that yields
  // after each summary, so that a caller on an event loop can interleave other work.
  function* finishInSteps(): Generator<void, BacklogForecast, void> {
    if (done < simulations) throw new Error(`forecast simulation incomplete: ${done} of ${simulations}`);
    const seriesOf = (rule: number, group: number, quantity: number): Float64Array => {
      const start = ((rule * groupCount + group) * quantityCount + quantity) * simulations;
      return draws.subarray(start, start + simulations);
    };
    const shippingExpectations: ShippingExpectations | null =
      input.expectations === undefined ? shippingExpectation : input.expectations;
    const expectationsByRule: TestExpectation[][] = [];
    for (let rule = 0; rule < ruleCount; rule++) {
      const perTest: TestExpectation[] = [];
      for (const [index, test] of tests.entries()) {
        perTest.push(testExpectation(shippingExpectations, test, thresholds[rule]![index]!));
        if (shippingExpectations) yield;
      }
      expectationsByRule.push(perTest);
    }
    const groupMembers = (group: number): number[] =>
      tests.flatMap((_, index) =>
        group === 0 || teamGroup[index] === group || familyGroup[index] === group ? [index] : [],
      );
    function* summarise(rule: number, group: number): Generator<void, OutcomeSummaries, void> {
      const members = groupMembers(group);
      const expectations = expectationsByRule[rule]!;
      const sumOf = (pick: (expectation: TestExpectation) => number | null): number | null => {
        let total = 0;
        for (const index of members) {
          const value = pick(expectations[index]!);
          if (value === null) return null;
          total += value;
        }
        return total;
      };
      const expectedShipped = sumOf((expectation) => expectation.probabilityOfShipping);
      const expectedRealWins = sumOf((expectation) => expectation.probabilityOfRealWin);
      const realizedExpected = sumOf((expectation) => expectation.expectedShippedEffect);
      const noiseExpected = sumOf((expectation) => expectation.expectedShippedNoise);
      const claimedExpected =
        realizedExpected === null || noiseExpected === null ? null : realizedExpected + noiseExpected;
      const claimed = seriesOf(rule, group, claimedSlot);
      const realized = seriesOf(rule, group, realizedSlot);
      const gap = new Float64Array(simulations);
      for (let r = 0; r < simulations; r++) gap[r] = claimed[r]! - realized[r]!;
      const shipped = withExpected(seriesOf(rule, group, shippedSlot), expectedShipped);
      yield;
      const realWins = withExpected(seriesOf(rule, group, realWinSlot), expectedRealWins);
      yield;
      const falseWins = withExpected(
        seriesOf(rule, group, falseWinSlot),
        expectedShipped === null || expectedRealWins === null ? null : expectedShipped - expectedRealWins,
      );
      yield;
      const claimedLift = withExpected(claimed, claimedExpected);
      yield;
      const realizedLift = withExpected(realized, realizedExpected);
      yield;
      const liftGap = withExpected(gap, noiseExpected);
      yield;
      return { shipped, realWins, falseWins, claimedLift, realizedLift, liftGap };
    }
    const ruleForecasts: RuleForecast[] = [];
    for (const [ruleIndex, rule] of rules.entries()) {
      const values = criticalValues[ruleIndex]!;
      const common = values.every((value) => value === values[0]) ? values[0]! : null;
      const overall = yield* summarise(ruleIndex, 0);
      const byTeam: GroupForecast[] = [];
      for (const [teamIndex, name] of teamNames.entries())
        byTeam.push({
          name,
          tests: groupMembers(1 + teamIndex).length,
          ...(yield* summarise(ruleIndex, 1 + teamIndex)),
        });
      const byFamily: GroupForecast[] = [];
      for (const [familyIndex, name] of familyNames.entries())
        byFamily.push({
          name,
          tests: groupMembers(1 + teamNames.length + familyIndex).length,
          ...(yield* summarise(ruleIndex, 1 + teamNames.length + familyIndex)),
        });
      ruleForecasts.push({
        label: rule.label,
        criticalValue: common,
        alpha: common === null ? null : 2 * normalSurvival(common),
        ...overall,
        probabilityToReachTarget:
          target === null ? null : shareAtLeast(seriesOf(ruleIndex, 0, realizedSlot), target),
        byTeam,
        byFamily,
        tests: tests.map((test, index) => ({
          name: test.name,
          team: test.team,
          family: test.family,
          standardError: test.standardError,
          criticalValue: values[index]!,
          threshold: thresholds[ruleIndex]![index]!,
          simulatedShipShare: shipCounts[ruleIndex * testCount + index]! / simulations,
          probabilityOfShipping: expectationsByRule[ruleIndex]![index]!.probabilityOfShipping,
          expectedShippedEffect: expectationsByRule[ruleIndex]![index]!.expectedShippedEffect,
        })),
      });
    }
    const differences: RuleDifference[] = [];
    for (let ruleIndex = 1; ruleIndex < ruleCount; ruleIndex++) {
      const difference = (quantity: number | "gap"): Float64Array => {
        const values = new Float64Array(simulations);
        const pick = (index: number, r: number): number =>
          quantity === "gap"
            ? seriesOf(index, 0, claimedSlot)[r]! - seriesOf(index, 0, realizedSlot)[r]!
            : seriesOf(index, 0, quantity)[r]!;
        for (let r = 0; r < simulations; r++) values[r] = pick(ruleIndex, r) - pick(0, r);
        return values;
      };
      const realizedDifference = difference(realizedSlot);
      const expectedDifference = (quantity: keyof OutcomeSummaries): number | null => {
        const later = ruleForecasts[ruleIndex]![quantity].expected;
        const first = ruleForecasts[0]![quantity].expected;
        return later === null || first === null ? null : later - first;
      };
      const summaries: Partial<Record<keyof OutcomeSummaries, OutcomeSummary>> = {};
      for (const [quantity, series] of [
        ["shipped", shippedSlot],
        ["realWins", realWinSlot],
        ["falseWins", falseWinSlot],
        ["claimedLift", claimedSlot],
        ["realizedLift", realizedSlot],
        ["liftGap", "gap"],
      ] as const) {
        summaries[quantity] = withExpected(
          quantity === "realizedLift" ? realizedDifference : difference(series),
          expectedDifference(quantity),
        );
        yield;
      }
      differences.push({
        label: rules[ruleIndex]!.label,
        baseline: rules[0]!.label,
        shipped: summaries.shipped!,
        realWins: summaries.realWins!,
        falseWins: summaries.falseWins!,
        claimedLift: summaries.claimedLift!,
        realizedLift: summaries.realizedLift!,
        liftGap: summaries.liftGap!,
        probabilityRealizedAtLeastBaseline: shareAtLeast(realizedDifference, 0),
      });
    }
    return {
      seed: input.seed,
      simulations,
      target,
      rules: ruleForecasts,
      differences,
      assumptions: [
        ...forecastAssumptions(simulations, input.expectations !== null),
        ...(replicateSets.length === 0
          ? []
          : [
              `${tests.filter((test) => test.priorReplicates).length} planned tests draw their prior from bootstrap refits (${replicateSets.map((set) => set.length).join(", ")} per family): each simulated quarter uses one refit per family, uniformly, for every rule; exact expectations average over the refits.`,
            ]),
      ],
      cautions: replicateSets.length === 0 ? forecastCautions : forecastCautionsWithReplicates,
    };
  }

  const finish = (): BacklogForecast => {
    const steps = finishInSteps();
    for (;;) {
      const step = steps.next();
      if (step.done) return step.value;
    }
  };

  return { simulations, completed: () => done, advance, finish, finishInSteps };
}

/** Runs the whole simulation at once (pure; see createBacklogSimulation for the stepwise form). */
export function forecastBacklog(input: BacklogForecastInput): BacklogForecast {
  const simulation = createBacklogSimulation(input);
  simulation.advance(simulation.simulations);
  return simulation.finish();
}

function addShipped(
  accumulator: Float64Array,
  base: number,
  winSlot: number,
  estimate: number,
  theta: number,
): void {
  accumulator[base + shippedSlot]! += 1;
  accumulator[base + winSlot]! += 1;
  accumulator[base + claimedSlot]! += estimate;
  accumulator[base + realizedSlot]! += theta;
}

interface TestExpectation {
  readonly probabilityOfShipping: number | null;
  readonly probabilityOfRealWin: number | null;
  readonly expectedShippedEffect: number | null;
  /** E[(y - theta) 1{ship}]: the winner's-curse part of the claimed lift. */
  readonly expectedShippedNoise: number | null;
}

/**
 * Exact expectations of one test; with prior replicates, their average over the refits (the
 * quarter's prior is each refit with equal probability, so expectations mix linearly).
 */
function testExpectation(
  expectations: ShippingExpectations | null,
  test: ForecastPlannedTest,
  threshold: number,
): TestExpectation {
  const replicates = test.priorReplicates ?? null;
  if (!expectations || replicates === null)
    return priorExpectation(expectations, test.prior, test, threshold);
  const parts = replicates.map((prior) => priorExpectation(expectations, prior, test, threshold));
  const average = (pick: (part: TestExpectation) => number | null): number | null => {
    let total = 0;
    for (const part of parts) {
      const value = pick(part);
      if (value === null) return null;
      total += value;
    }
    return total / parts.length;
  };
  return {
    probabilityOfShipping: average((part) => part.probabilityOfShipping),
    probabilityOfRealWin: average((part) => part.probabilityOfRealWin),
    expectedShippedEffect: average((part) => part.expectedShippedEffect),
    expectedShippedNoise: average((part) => part.expectedShippedNoise),
  };
}

function priorExpectation(
  expectations: ShippingExpectations | null,
  prior: EffectPrior,
  test: ForecastPlannedTest,
  threshold: number,
): TestExpectation {
  if (!expectations)
    return {
      probabilityOfShipping: null,
      probabilityOfRealWin: null,
      expectedShippedEffect: null,
      expectedShippedNoise: null,
    };
  return {
    expectedShippedNoise: expectedShippedNoise(expectations, prior, test.standardError, threshold),
    probabilityOfShipping: expectations.probabilityOfShipping(prior, test.standardError, threshold),
    probabilityOfRealWin: expectations.probabilityOfShippingAbove(prior, test.standardError, threshold, 0),
    expectedShippedEffect: expectations.expectedShippedEffect(prior, test.standardError, threshold),
  };
}

/**
 * E[(y - theta) 1{y > t}] = E_theta[s phi((t - theta)/s)] = s^2 f_Y(t), with f_Y the prior
 * predictive density of the estimate at the threshold (the Gaussian integration-by-parts identity
 * behind Tweedie's formula; Efron 2011, "Tweedie's formula and selection bias", JASA 106:1602).
 * f_Y comes from src/stats/shipping-expectation.ts, closed form for point, normal, uniform and
 * (truncated) half-normal components and adaptive quadrature for half-t ones, so the expectation
 * exists for every prior; null only when that density is not finite.
 */
function expectedShippedNoise(
  expectations: ShippingExpectations,
  prior: EffectPrior,
  standardError: number,
  threshold: number,
): number | null {
  // An infinite threshold ships never or always: either way the noise shipped averages 0.
  if (!Number.isFinite(threshold)) return 0;
  const density = expectations.predictiveDensity(prior, standardError, threshold);
  return Number.isFinite(density) ? standardError * standardError * density : null;
}

function withExpected(values: Float64Array, expected: number | null): OutcomeSummary {
  return { ...drawSummary(values), expected };
}

function shareAtLeast(values: Float64Array, bound: number): ProbabilityEstimate {
  let count = 0;
  for (let r = 0; r < values.length; r++) if (values[r]! >= bound) count++;
  const estimate = count / values.length;
  return { estimate, monteCarloError: Math.sqrt((estimate * (1 - estimate)) / values.length) };
}

function forecastAssumptions(simulations: number, analytic: boolean): string[] {
  return [
    "Each planned test's true effect is drawn from its metric family's prior, independently of the others; its estimate is normal around it with the planned standard error (statistics.md section 8).",
    "A test ships when its estimate exceeds z* times its standard error (one-sided; alpha is the equivalent two-sided level).",
    "A real win is a shipped test whose true effect is above 0; a false win is a shipped test whose true effect is 0 or below.",
    "Claimed lift is the sum of the shipped tests' estimates, realized lift the sum of their true effects, the gap their difference; lifts are relative and added, not compounded.",
    `Means carry a Monte Carlo error (sd / sqrt(${simulations})); quantiles are R type 7 over the ${simulations} simulated portfolios.`,
    "Rules are compared on the same draws of true effects and noise (common random numbers).",
    analytic
      ? "Expected values beside the simulated means are exact sums over the planned tests (shipped, real and false wins, realized lift; claimed lift and the gap through E[(y - theta) 1{ship}] = s^2 f(threshold), f the predictive density of the estimate, integrated numerically for half-t priors)."
      : "No analytic expectations were available for this run.",
  ];
}
