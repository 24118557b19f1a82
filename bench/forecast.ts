/**
 * Backlog forecast benchmark: 200 planned tests x 10,000 simulated quarters (target <= 1 s),
 * against a baseline in the same process: drawing the same number of (theta, noise) normal pairs
 * from createRandom in a bare loop. Reported: median of 5 runs, for one rule, for two rules on
 * common random numbers, with the exact expectations computed beside the simulation, and in
 * event-loop steps as the API and CLI run it (runForecastInSteps).
 * Run: npm run bench -- forecast
 */
import { runForecastInSteps } from "../src/backlog/run-forecast-in-steps.ts";
import { assumedPrior } from "../src/stats/assumed-prior.ts";
import type { EffectPrior } from "../src/stats/effect-prior.ts";
import { type BacklogForecastInput, forecastBacklog } from "../src/stats/forecast-backlog.ts";
import { criticalValueForAlpha } from "../src/stats/forecast-rule.ts";
import { createRandom } from "../src/stats/random.ts";

const plannedTests = 200;
const simulations = 10_000;
const repeats = 5;

const symmetric: EffectPrior = {
  family: "symmetric",
  components: [
    { component: { kind: "point", at: 0 }, weight: 0.55 },
    ...[0.002, 0.004, 0.008, 0.016, 0.032].map((scale, index) => ({
      component: { kind: "normal" as const, mean: 0, scale },
      weight: [0.15, 0.12, 0.1, 0.05, 0.03][index]!,
    })),
  ],
};
const skewed: EffectPrior = {
  family: "skewed",
  components: [
    { component: { kind: "point", at: 0 }, weight: 0.6 },
    { component: { kind: "uniform", lower: -0.03, upper: 0 }, weight: 0.25 },
    { component: { kind: "uniform", lower: 0, upper: 0.02 }, weight: 0.15 },
  ],
};
const fat = assumedPrior({ winRate: 0.1, effectScale: 0.01, shape: "fat" });
const priors = [symmetric, skewed, fat];

function input(rules: number, expectations: boolean): BacklogForecastInput {
  return {
    tests: Array.from({ length: plannedTests }, (_, index) => ({
      name: `planned-${index}`,
      team: `team-${index % 8}`,
      family: `family-${index % 3}`,
      prior: priors[index % 3]!,
      standardError: 0.004 + 0.00005 * index,
    })),
    rules: [
      { label: "alpha=0.05", criticalValue: criticalValueForAlpha(0.05) },
      { label: "alpha=0.2", criticalValue: criticalValueForAlpha(0.2) },
    ].slice(0, rules),
    simulations,
    seed: 1,
    ...(expectations ? {} : { expectations: null }),
  };
}

function medianSeconds(run: () => unknown): number {
  const times: number[] = [];
  for (let repeat = 0; repeat < repeats; repeat++) {
    const started = performance.now();
    run();
    times.push((performance.now() - started) / 1000);
  }
  return times.sort((a, b) => a - b)[Math.floor(repeats / 2)]!;
}

async function medianSecondsAsync(run: () => Promise<unknown>): Promise<number> {
  const times: number[] = [];
  for (let repeat = 0; repeat < repeats; repeat++) {
    const started = performance.now();
    await run();
    times.push((performance.now() - started) / 1000);
  }
  return times.sort((a, b) => a - b)[Math.floor(repeats / 2)]!;
}

export async function runForecastBench(): Promise<object> {
  const baseline = medianSeconds(() => {
    const random = createRandom(1);
    let sum = 0;
    for (let draw = 0; draw < plannedTests * simulations; draw++) sum += random.normal() + random.normal();
    return sum;
  });
  const oneRule = medianSeconds(() => forecastBacklog(input(1, false)));
  const twoRules = medianSeconds(() => forecastBacklog(input(2, false)));
  const withExpectations = medianSeconds(() => forecastBacklog(input(2, true)));
  // As the API and CLI run it: steps of 50000 draws and summaries in 10 ms slices, yielding between.
  const inSteps = await medianSecondsAsync(() => runForecastInSteps(input(2, true)));
  const target = 1;
  return {
    command: "npm run bench -- forecast",
    workload: {
      plannedTests,
      simulations,
      repeats,
      priors: ["symmetric (6 components)", "skewed (uniforms)", "fat (half-t 3 df)"],
    },
    baselineSeconds: baseline,
    baselineDescription: "bare loop: 2 normal draws per planned test per quarter from createRandom",
    seconds: {
      oneRule,
      twoRulesCommonRandomNumbers: twoRules,
      twoRulesWithExactExpectations: withExpectations,
      twoRulesInEventLoopSteps: inSteps,
    },
    ratioToBaseline: {
      oneRule: oneRule / baseline,
      twoRulesCommonRandomNumbers: twoRules / baseline,
      twoRulesWithExactExpectations: withExpectations / baseline,
      twoRulesInEventLoopSteps: inSteps / baseline,
    },
    targetSeconds: target,
    meetsTarget: twoRules <= target,
  };
}
