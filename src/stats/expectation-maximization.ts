/**
 * Plain EM for mixture weights (Dempster, Laird & Rubin 1977; for this problem e.g. Stephens 2017,
 * Biostatistics 18:275, section 2.3): w_k <- (sum_i a_i w_k L_ik / (Lw)_i + c_k) / A. It is the
 * baseline that mix-SQP (mix-sqp.ts) is benchmarked against, not a method plumbline uses: its
 * convergence near the optimum is sublinear. Same problem, options and stopping rule
 * (max_k d_k <= 1 + tolerance) as solveMixtureWeights. Cost O(N K) per iteration.
 */
import type { MixtureProblem, MixtureSolution, MixtureSolverOptions } from "./mix-sqp.ts";

export function expectationMaximizationWeights(
  problem: MixtureProblem,
  options: MixtureSolverOptions = {},
): MixtureSolution {
  const { matrix } = problem;
  const columns = matrix.columns;
  const values = matrix.values;
  const count = problem.rows ? problem.rows.length : matrix.rows;
  const rows = problem.rows ?? Int32Array.from({ length: count }, (_, r) => r);
  const rowWeights = problem.rowWeights ?? new Float64Array(count).fill(1);
  const penalty = problem.penalty ?? new Float64Array(columns);
  const tolerance = options.tolerance ?? 1e-8;
  const maxIterations = options.maxIterations ?? 10_000;
  let totalWeight = 0;
  for (let r = 0; r < count; r++) totalWeight += rowWeights[r] as number;
  for (let k = 0; k < columns; k++) totalWeight += penalty[k] as number;
  const weights = new Float64Array(columns).fill(1 / columns);
  if (options.initialWeights && options.initialWeights.length === columns) {
    let sum = 0;
    for (let k = 0; k < columns; k++) sum += Math.max(0, options.initialWeights[k] as number);
    if (sum > 0)
      for (let k = 0; k < columns; k++) weights[k] = Math.max(0, options.initialWeights[k] as number) / sum;
  }
  const ratioSums = new Float64Array(columns);
  let iterations = 0;
  let gap = Number.POSITIVE_INFINITY;
  for (;;) {
    ratioSums.fill(0);
    for (let r = 0; r < count; r++) {
      const offset = (rows[r] as number) * columns;
      let fitted = 0;
      for (let k = 0; k < columns; k++) fitted += (weights[k] as number) * (values[offset + k] as number);
      const scale = (rowWeights[r] as number) / fitted;
      for (let k = 0; k < columns; k++)
        ratioSums[k] = (ratioSums[k] as number) + scale * (values[offset + k] as number);
    }
    gap = Number.NEGATIVE_INFINITY;
    for (let k = 0; k < columns; k++) {
      const w = weights[k] as number;
      const barrier = (penalty[k] as number) > 0 ? (penalty[k] as number) / w : 0;
      const d = ((ratioSums[k] as number) + barrier) / totalWeight;
      if (d - 1 > gap) gap = d - 1;
    }
    if (gap <= tolerance || iterations >= maxIterations) break;
    iterations++;
    for (let k = 0; k < columns; k++) {
      weights[k] = ((weights[k] as number) * (ratioSums[k] as number) + (penalty[k] as number)) / totalWeight;
    }
  }
  return { weights, iterations, converged: gap <= tolerance, optimalityGap: gap };
}
