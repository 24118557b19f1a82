/**
 * Test & roll: test two treatments on n1 and n2 users of a finite population of N, then deploy
 * the one with the higher posterior mean response to the remaining N - n1 - n2 (Feit & Berman
 * 2019, "Test & Roll: Profit-Maximizing A/B Tests", Marketing Science 38:1038).
 *
 * Model (their section 3): mean responses m_j ~ N(mu_j, sigma_j^2) a priori, independent; a user's
 * response in arm j ~ N(m_j, s_j^2). The posterior mean of arm j after n_j users is normal a
 * priori-predictively with mean mu_j and variance sigma_j^4 / (sigma_j^2 + s_j^2 / n_j), so with
 * e = mu1 - mu2 and v^2 the sum of those two variances (their eq. 18)
 *   E[profit] = n1 mu1 + n2 mu2 + (N - n1 - n2) (mu2 + e Phi(e/v) + v phi(e/v)).
 * With symmetric priors the posterior-mean rule is "deploy the higher observed mean", the profit
 * is their closed form (N - 2n)[mu + sqrt(2) sigma^2 / (sqrt(pi) sqrt(2 sigma^2 + 2 s^2/n))] + 2 n mu,
 * maximised by n* = sqrt(N/4 (s/sigma)^2 + (3/4 (s/sigma)^2)^2) - 3/4 (s/sigma)^2 (statistics.md
 * section 7). Perfect information earns N E[max(m1, m2)]; regret is the difference.
 * The error rate is P(deploying the arm with the lower mean): D = m1 - m2 and the decision
 * statistic Q = P1 - P2 are jointly normal with Cov(D, Q) = Var(Q) = v^2, so D = Q + W with W
 * independent of Q, Var(W) = sigma1^2 + sigma2^2 - v^2, and the error is an orthant probability
 * (shipping-expectation.ts). For symmetric priors it equals 1/2 - arctan(sigma sqrt(n) / s) / pi
 * (Feit & Berman eq. 12; Sheppard's orthant formula).
 * Unequal priors: the profit is maximised numerically over (log n1, log n2) by Nelder-Mead.
 */
import { normalCdf, normalPdf } from "./distributions.ts";
import type { EffectPrior } from "./effect-prior.ts";
import { requireFinite, requirePositive, StatsInputError } from "./errors.ts";
import { nelderMead } from "./optimize-defaults.ts";
import { shippingPartial } from "./shipping-expectation.ts";

export interface TestAndRollArm {
  /** Prior mean of the arm's mean response (mu). */
  readonly priorMean: number;
  /** Prior sd of the arm's mean response (sigma). */
  readonly priorSd: number;
  /** Sd of one user's response (s). */
  readonly responseSd: number;
}

export interface TestAndRollProblem {
  /** Population N available for testing and deployment. */
  readonly population: number;
  readonly arms: readonly [TestAndRollArm, TestAndRollArm];
}

export interface TestAndRollPlan {
  /** Users per arm with symmetric priors (closed form); null for unequal priors (see nByArm). */
  readonly nPerArm: number | null;
  /** Users in each arm, rounded to whole users. */
  readonly nByArm: readonly [number, number];
  /** The unrounded optimum. */
  readonly nByArmExact: readonly [number, number];
  readonly method: "closedForm" | "numeric";
  /** Expected total profit over the population (response units summed over users). */
  readonly expectedProfit: number;
  readonly perfectInformationProfit: number;
  /** perfectInformationProfit - expectedProfit. */
  readonly regret: number;
  /** regret / perfectInformationProfit. */
  readonly regretShare: number;
  /** P(the deployed arm has the lower mean response). */
  readonly errorRate: number;
  readonly assumptions: readonly string[];
  readonly cautions: readonly string[];
}

/** Feit & Berman's profit-maximising n per arm for symmetric normal priors (not rounded). */
export function testAndRollSampleSize(population: number, priorSd: number, responseSd: number): number {
  const ratio = (responseSd / priorSd) ** 2;
  return Math.sqrt((population / 4) * ratio + ((3 / 4) * ratio) ** 2) - (3 / 4) * ratio;
}

/** Var(P1 - P2): the prior-predictive variance of the difference of posterior means, v^2. */
function decisionVariance(problem: TestAndRollProblem, n1: number, n2: number): number {
  const [first, second] = problem.arms;
  const part = (arm: TestAndRollArm, n: number) =>
    arm.priorSd ** 4 / (arm.priorSd * arm.priorSd + (arm.responseSd * arm.responseSd) / n);
  return part(first, n1) + part(second, n2);
}

/** E[X^+] for X ~ N(mean, sd^2): mean Phi(mean/sd) + sd phi(mean/sd). */
function positivePartMean(mean: number, sd: number): number {
  if (sd === 0) return Math.max(mean, 0);
  return mean * normalCdf(mean / sd) + sd * normalPdf(mean / sd);
}

/** Expected profit of testing n1 and n2 users and deploying the arm with the higher posterior mean. */
export function testAndRollProfit(problem: TestAndRollProblem, n1: number, n2: number): number {
  const [first, second] = problem.arms;
  const gain = positivePartMean(
    first.priorMean - second.priorMean,
    Math.sqrt(decisionVariance(problem, n1, n2)),
  );
  return (
    n1 * first.priorMean + n2 * second.priorMean + (problem.population - n1 - n2) * (second.priorMean + gain)
  );
}

/** N E[max(m1, m2)] = N (mu2 + E[D^+]). */
export function perfectInformationProfit(problem: TestAndRollProblem): number {
  const [first, second] = problem.arms;
  return (
    problem.population *
    (second.priorMean +
      positivePartMean(first.priorMean - second.priorMean, Math.hypot(first.priorSd, second.priorSd)))
  );
}

/** P(deploying the arm with the lower mean) at n1, n2. */
export function testAndRollErrorRate(problem: TestAndRollProblem, n1: number, n2: number): number {
  const [first, second] = problem.arms;
  const decision = decisionVariance(problem, n1, n2);
  const remainder = first.priorSd ** 2 + second.priorSd ** 2 - decision;
  // Q = P1 - P2 plays the prior, D = Q + W the estimate: wrong when Q > 0 >= D or Q <= 0 < D.
  const prior: EffectPrior = {
    family: "assumed",
    components: [
      {
        component: { kind: "normal", mean: first.priorMean - second.priorMean, scale: Math.sqrt(decision) },
        weight: 1,
      },
    ],
  };
  const noise = Math.sqrt(Math.max(remainder, 0));
  if (!(noise > 0)) return 0;
  const deployFirst = shippingPartial(prior, noise, Number.NEGATIVE_INFINITY, 0).probability;
  const deployFirstRightly = shippingPartial(prior, noise, 0, 0, Number.POSITIVE_INFINITY).probability;
  const deploySecondWrongly = shippingPartial(prior, noise, 0, Number.NEGATIVE_INFINITY, 0).probability;
  return deployFirst - deployFirstRightly + deploySecondWrongly;
}

function validate(problem: TestAndRollProblem): void {
  requirePositive("population", problem.population);
  if (problem.population < 4) throw new StatsInputError("population", "at least 4", problem.population);
  problem.arms.forEach((arm, index) => {
    requireFinite(`arms[${index}].priorMean`, arm.priorMean);
    requirePositive(`arms[${index}].priorSd`, arm.priorSd);
    requirePositive(`arms[${index}].responseSd`, arm.responseSd);
  });
}

function isSymmetric(problem: TestAndRollProblem): boolean {
  const [first, second] = problem.arms;
  return (
    first.priorMean === second.priorMean &&
    first.priorSd === second.priorSd &&
    first.responseSd === second.responseSd
  );
}

/** The profit-maximising plan: closed form for symmetric priors, numerical optimum otherwise. */
export function planTestAndRoll(problem: TestAndRollProblem): TestAndRollPlan {
  validate(problem);
  const { population } = problem;
  let exact: [number, number];
  let method: TestAndRollPlan["method"];
  if (isSymmetric(problem)) {
    const n = testAndRollSampleSize(population, problem.arms[0].priorSd, problem.arms[0].responseSd);
    exact = [n, n];
    method = "closedForm";
  } else {
    exact = numericOptimum(problem);
    method = "numeric";
  }
  const rounded = roundPlan(problem, exact);
  const expectedProfit = testAndRollProfit(problem, rounded[0], rounded[1]);
  const perfect = perfectInformationProfit(problem);
  const regret = perfect - expectedProfit;
  return {
    nPerArm: method === "closedForm" ? rounded[0] : null,
    nByArm: rounded,
    nByArmExact: exact,
    method,
    expectedProfit,
    perfectInformationProfit: perfect,
    regret,
    regretShare: regret / perfect,
    errorRate: testAndRollErrorRate(problem, rounded[0], rounded[1]),
    assumptions: [
      "Finite population: test on n1 + n2 users, deploy the arm with the higher posterior mean response to the remaining users (with symmetric priors: the higher observed mean).",
      "Each arm's mean response is normal a priori (priorMean, priorSd), independent across arms; a user's response is normal around it with sd responseSd.",
      "Profit is the sum of responses over the whole population, test phase included; no fixed cost of testing.",
      method === "closedForm"
        ? "Symmetric priors: n per arm from Feit & Berman's closed form, rounded to the better neighbouring whole number."
        : "Unequal priors: n1, n2 maximise the exact expected profit numerically (Nelder-Mead in log n), rounded to whole users.",
    ],
    cautions: [
      "This does not replace a statistician's review of the design.",
      "Not for clinical or safety-critical decisions.",
      "The plan is only as good as the prior on the arms' mean responses.",
    ],
  };
}

function numericOptimum(problem: TestAndRollProblem): [number, number] {
  const { population } = problem;
  const objective = ([log1, log2]: [number, number]): number => {
    const n1 = Math.exp(log1);
    const n2 = Math.exp(log2);
    if (n1 < 1 || n2 < 1 || n1 + n2 > population) return Number.POSITIVE_INFINITY;
    return -testAndRollProfit(problem, n1, n2);
  };
  // Start from the symmetric closed form with the pooled scales, then refine.
  const [first, second] = problem.arms;
  const start = Math.max(
    1,
    Math.min(
      population / 4,
      testAndRollSampleSize(
        population,
        Math.hypot(first.priorSd, second.priorSd) / Math.SQRT2,
        Math.hypot(first.responseSd, second.responseSd) / Math.SQRT2,
      ),
    ),
  );
  let best = nelderMead(objective, [Math.log(start), Math.log(start)], [0.5, 0.5]);
  // Restart once from the result: Nelder-Mead can stall on a ridge.
  best = nelderMead(objective, best.point, [0.05, 0.05]);
  return [Math.exp(best.point[0]), Math.exp(best.point[1])];
}

function roundPlan(problem: TestAndRollProblem, exact: readonly [number, number]): [number, number] {
  let best: [number, number] = [Math.max(1, Math.round(exact[0])), Math.max(1, Math.round(exact[1]))];
  let bestProfit = Number.NEGATIVE_INFINITY;
  for (const n1 of [Math.floor(exact[0]), Math.ceil(exact[0])]) {
    for (const n2 of [Math.floor(exact[1]), Math.ceil(exact[1])]) {
      if (n1 < 1 || n2 < 1 || n1 + n2 > problem.population) continue;
      const profit = testAndRollProfit(problem, n1, n2);
      if (profit > bestProfit) {
        bestProfit = profit;
        best = [n1, n2];
      }
    }
  }
  return best;
}
