/**
 * A portfolio of any size from the demo's model, on the (y, s) scale: for "known truth" tests of
 * the prior fit, the review and the defaults, which need thousands of tests with exact truth.
 * Per test: baseline and sample from the family's traffic model (as in generateDemo), the
 * standard error of statistics.md section 7 (`s = sqrt(2 (1-p) / (n p))` on a rate,
 * `(sd/m) sqrt(2/n)` on revenue per visitor), theta from the prior, `y ~ N(theta, s^2)` exactly,
 * and the textbook rule: shipped when `y > z_{1-alpha/2} s`.
 * Optional peeking (default none, so that y | theta is exactly normal): the estimate is followed
 * as a Brownian motion in information fraction, y_f = theta + s B(f) / f with SE s / sqrt(f),
 * and a look with |y_f| > z SE_f stops the test there (y and s are then the look's).
 * Example: simulatePortfolio({ seed: 1, tests: 3000 }) gives 3000 tests of the conversion family.
 */

import { normalQuantile } from "../stats/distributions.ts";
import type { EffectPrior } from "../stats/effect-prior.ts";
import { StatsInputError } from "../stats/errors.ts";
import { createPriorSampler } from "../stats/prior-sampling.ts";
import { createRandom } from "../stats/random.ts";
import { type DemoFamily, type DemoParameters, defaultDemoParameters } from "./demo-parameters.ts";

export interface PortfolioOptions {
  readonly seed: number;
  readonly tests: number;
  /** Traffic model and default prior; default "conversion". */
  readonly family?: DemoFamily;
  /** The distribution of true effects; default the family's demo prior. */
  readonly prior?: EffectPrior;
  /** Two-sided alpha of the textbook rule; default the demo's 0.05. */
  readonly alpha?: number;
  /** Share of tests analysed at the demo's looks and stopped when significant; default 0. */
  readonly peekingShare?: number;
  readonly parameters?: DemoParameters;
}

export interface SimulatedPortfolio {
  readonly family: DemoFamily;
  readonly prior: EffectPrior;
  readonly alpha: number;
  /** z_{1-alpha/2}: a test ships when y / s exceeds it. */
  readonly criticalZ: number;
  readonly y: readonly number[];
  readonly s: readonly number[];
  readonly trueEffect: readonly number[];
  readonly shipped: readonly boolean[];
  readonly stoppedEarly: readonly boolean[];
}

export function simulatePortfolio(options: PortfolioOptions): SimulatedPortfolio {
  if (!Number.isInteger(options.tests) || options.tests < 1) {
    throw new StatsInputError("tests", "a whole number of at least 1", options.tests);
  }
  if (!Number.isFinite(options.seed)) throw new StatsInputError("seed", "a finite number", options.seed);
  const parameters = options.parameters ?? defaultDemoParameters;
  const family = options.family ?? "conversion";
  const metric = parameters.metrics[family];
  const prior = options.prior ?? metric.prior;
  const alpha = options.alpha ?? parameters.alpha;
  if (!(alpha > 0 && alpha < 1)) throw new StatsInputError("alpha", "strictly between 0 and 1", alpha);
  const peekingShare = options.peekingShare ?? 0;
  if (!(peekingShare >= 0 && peekingShare <= 1)) {
    throw new StatsInputError("peekingShare", "between 0 and 1", peekingShare);
  }
  const sampleTheta = createPriorSampler(prior);
  const random = createRandom(options.seed);
  const criticalZ = normalQuantile(1 - alpha / 2);
  const looks = [...parameters.peeking.looks, 1];
  const logUnits = { low: Math.log(metric.dailyUnits.low), high: Math.log(metric.dailyUnits.high) };
  const spendVarianceFactor = Math.exp(parameters.spend.logSd ** 2);
  const y: number[] = [];
  const s: number[] = [];
  const trueEffect: number[] = [];
  const shipped: boolean[] = [];
  const stoppedEarly: boolean[] = [];
  for (let test = 0; test < options.tests; test++) {
    const baselineRate =
      metric.baselineRate.low + (metric.baselineRate.high - metric.baselineRate.low) * random.uniform();
    const dailyUnits = Math.exp(logUnits.low + (logUnits.high - logUnits.low) * random.uniform());
    const runDays = metric.runDays[random.integer(metric.runDays.length)]!;
    const nPerArm = Math.max(100, Math.round((dailyUnits * runDays) / 2));
    const unitSd =
      family === "revenue"
        ? Math.sqrt(2 * (spendVarianceFactor / baselineRate - 1))
        : Math.sqrt((2 * (1 - baselineRate)) / baselineRate);
    const fullSe = unitSd / Math.sqrt(nPerArm);
    const theta = sampleTheta(random);
    const peeked = random.uniform() < peekingShare;
    let estimate: number;
    let standardError = fullSe;
    let stopped = false;
    if (!peeked) {
      estimate = theta + fullSe * random.normal();
    } else {
      let brownian = 0;
      let previous = 0;
      estimate = theta;
      for (const [index, fraction] of looks.entries()) {
        brownian += Math.sqrt(fraction - previous) * random.normal();
        previous = fraction;
        estimate = theta + (fullSe * brownian) / fraction;
        standardError = fullSe / Math.sqrt(fraction);
        if (index < looks.length - 1 && Math.abs(estimate) > criticalZ * standardError) {
          stopped = true;
          break;
        }
      }
    }
    y.push(estimate);
    s.push(standardError);
    trueEffect.push(theta);
    shipped.push(estimate > criticalZ * standardError);
    stoppedEarly.push(stopped);
  }
  return { family, prior, alpha, criticalZ, y, s, trueEffect, shipped, stoppedEarly };
}
