/**
 * Empirical-Bayes fit of the distribution of true effects (statistics.md section 5): given summaries
 * y_i ~ N(theta_i, s_i^2), the prior g = w_0 delta_0 + sum_k w_k f_k that maximises the marginal
 * log-likelihood sum_i log sum_k w_k L_ik (plus the null penalty) over the simplex, for the
 * `symmetric`, `skewed` or `grid` family (prior-grid.ts), solved by mix-SQP (mix-sqp.ts) to the
 * optimality condition max_k d_k <= 1 + tolerance.
 *
 * Null penalty (Stephens 2017, "False discovery rates: a new deal", Biostatistics 18:275, the
 * "nullbiased" prior of ashr): the objective adds (nullWeight - 1) log w_0, i.e. nullWeight - 1
 * pseudo-results known to be null. The default nullWeight 10 is ashr's; nullWeight 1 means no
 * penalty (the plain maximum-likelihood estimate). The penalty settles the split between the null
 * and near-null normals, which the data barely identify (statistics.md, "Identification"), on the
 * conservative side.
 *
 * Family "auto" fits all three and picks the better of `symmetric` and `skewed` by log-likelihood.
 * The `grid` fit (the nonparametric MLE) is reported beside them as the upper bound of the
 * likelihood, but it is not chosen automatically: being the most flexible, it has the highest
 * likelihood by construction, and its discrete atoms make poor credible intervals.
 */
import type { EffectPrior, PriorComponent, WeightedComponent } from "./effect-prior.ts";
import { requireFinite, requirePositive, StatsInputError } from "./errors.ts";
import { type LikelihoodMatrix, likelihoodMatrix } from "./likelihood-matrix.ts";
import {
  defaultSolverTolerance,
  type MixtureProblem,
  mixtureLogLikelihood,
  solveMixtureWeights,
} from "./mix-sqp.ts";
import { skewedComponents, symmetricComponents, thetaGridComponents } from "./prior-grid.ts";

export interface Observation {
  readonly y: number;
  readonly s: number;
}

export type FitFamily = "symmetric" | "skewed" | "grid";

export const fitFamilies: readonly FitFamily[] = ["symmetric", "skewed", "grid"];

/** ashr's default null weight (Stephens 2017); 1 means no penalty. */
export const defaultNullWeight = 10;

export interface FitOptions {
  /** Default "auto". */
  readonly family?: FitFamily | "auto";
  /** Penalty weight on w_0 (>= 1; 1 = none). Default defaultNullWeight = 10. */
  readonly nullWeight?: number;
  /** Warm start: weights over the family's default components (as in PriorFit.componentWeights). */
  readonly initialWeights?: Float64Array;
  readonly maxIterations?: number;
  /** Convergence: max_k d_k <= 1 + tolerance (default 1e-8; the contract of issue 4 is 1e-6). */
  readonly tolerance?: number;
}

export interface FamilyFit {
  readonly family: FitFamily;
  /** The prior with its zero-weight components dropped (the null is always kept). */
  readonly prior: EffectPrior;
  /** Unpenalized marginal log-likelihood sum_i log p(y_i | g), densities on the lift scale. */
  readonly logLik: number;
  /** logLik + (nullWeight - 1) log w_0: the maximised objective. */
  readonly penalizedLogLik: number;
  readonly iterations: number;
  readonly converged: boolean;
  /** max_k d_k - 1 of the maximised objective (the penalized one when nullWeight > 1). */
  readonly optimalityGap: number;
  /** Every default component of the family with its weight (zeros included), for warm starts. */
  readonly grid: readonly PriorComponent[];
  readonly componentWeights: Float64Array;
}

export interface PriorFit extends FamilyFit {
  readonly nullWeight: number;
  readonly observationCount: number;
  /** With family "auto": the fits of all three families (the chosen one included). */
  readonly alternatives?: readonly FamilyFit[];
}

/** Columns of validated summaries. */
export interface SummaryData {
  readonly y: Float64Array;
  readonly s: Float64Array;
}

export function fitEffectPrior(observations: readonly Observation[], options: FitOptions = {}): PriorFit {
  const data = observationColumns(observations);
  const nullWeight = options.nullWeight ?? defaultNullWeight;
  if (!Number.isFinite(nullWeight) || nullWeight < 1)
    throw new StatsInputError("nullWeight", "a finite number >= 1 (1 = no penalty)", nullWeight);
  const family = options.family ?? "auto";
  if (family !== "auto" && !fitFamilies.includes(family))
    throw new StatsInputError("family", "one of symmetric, skewed, grid, auto", family);
  if (options.tolerance !== undefined) requirePositive("tolerance", options.tolerance);
  if (options.maxIterations !== undefined) requirePositive("maxIterations", options.maxIterations);
  const common = { nullWeight, observationCount: data.y.length };
  if (family !== "auto") return { ...fitFamily(data, family, nullWeight, options), ...common };
  const alternatives = fitFamilies.map((each) =>
    fitFamily(data, each, nullWeight, { ...options, initialWeights: undefined }),
  );
  const [symmetric, skewed] = alternatives as [FamilyFit, FamilyFit, FamilyFit];
  const chosen = skewed.logLik > symmetric.logLik ? skewed : symmetric;
  return { ...chosen, ...common, alternatives };
}

/** Validates and copies observations into columns (StatsInputError names the index). */
export function observationColumns(observations: readonly Observation[]): SummaryData {
  if (observations.length === 0) throw new StatsInputError("observations", "a non-empty list", "[]");
  const y = new Float64Array(observations.length);
  const s = new Float64Array(observations.length);
  observations.forEach((observation, index) => {
    requireFinite(`observations[${index}].y`, observation.y);
    requirePositive(`observations[${index}].s`, observation.s);
    y[index] = observation.y;
    s[index] = observation.s;
  });
  return { y, s };
}

export function familyComponents(data: SummaryData, family: FitFamily): PriorComponent[] {
  if (family === "symmetric") return symmetricComponents(data);
  if (family === "skewed") return skewedComponents(data);
  return thetaGridComponents(data);
}

/** The penalty pseudo-counts of a component list: nullWeight - 1 on the null (index 0). */
export function nullPenalty(columns: number, nullWeight: number): Float64Array {
  const penalty = new Float64Array(columns);
  penalty[0] = nullWeight - 1;
  return penalty;
}

/** One family on prepared columns; the matrix is built, solved and dropped. */
export function fitFamily(
  data: SummaryData,
  family: FitFamily,
  nullWeight: number,
  options: Pick<FitOptions, "initialWeights" | "maxIterations" | "tolerance"> = {},
): FamilyFit {
  const grid = familyComponents(data, family);
  const matrix = likelihoodMatrix(data.y, data.s, grid);
  return fitOnMatrix(matrix, grid, family, nullWeight, options);
}

export function fitOnMatrix(
  matrix: LikelihoodMatrix,
  grid: readonly PriorComponent[],
  family: FitFamily,
  nullWeight: number,
  options: Pick<FitOptions, "initialWeights" | "maxIterations" | "tolerance"> & {
    readonly rows?: Int32Array;
    readonly rowWeights?: Float64Array;
  } = {},
): FamilyFit {
  const problem: MixtureProblem = {
    matrix,
    penalty: nullPenalty(grid.length, nullWeight),
    ...(options.rows ? { rows: options.rows } : {}),
    ...(options.rowWeights ? { rowWeights: options.rowWeights } : {}),
  };
  const solution = solveMixtureWeights(problem, {
    tolerance: options.tolerance ?? defaultSolverTolerance,
    ...(options.maxIterations !== undefined ? { maxIterations: options.maxIterations } : {}),
    ...(options.initialWeights && options.initialWeights.length === grid.length
      ? { initialWeights: options.initialWeights }
      : {}),
  });
  const logLik = mixtureLogLikelihood(problem, solution.weights);
  const nullShareValue = solution.weights[0] as number;
  const penalizedLogLik = nullWeight > 1 ? logLik + (nullWeight - 1) * Math.log(nullShareValue) : logLik;
  return {
    family,
    prior: priorFromWeights(family, grid, solution.weights),
    logLik,
    penalizedLogLik,
    iterations: solution.iterations,
    converged: solution.converged,
    optimalityGap: solution.optimalityGap,
    grid,
    componentWeights: solution.weights,
  };
}

export function priorFromWeights(
  family: FitFamily,
  grid: readonly PriorComponent[],
  weights: Float64Array,
): EffectPrior {
  const components: WeightedComponent[] = [];
  grid.forEach((component, k) => {
    const weight = weights[k] as number;
    if (k === 0 || weight > 0) components.push({ component, weight });
  });
  return { family, components };
}
