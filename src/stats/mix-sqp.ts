/**
 * Maximum-likelihood mixture weights: maximise sum_i a_i log sum_k w_k L_ik + sum_k c_k log w_k
 * over the simplex, by mix-SQP (Kim, Carbonetto, Stephens & Anitescu 2020, "A Fast Algorithm for
 * Maximum Likelihood Estimation of Mixture Proportions Using Sequential Quadratic Programming",
 * JCGS 29:945, Algorithm 2). a_i are row weights (bootstrap counts; 1 by default) and c_k >= 0 are
 * pseudo-counts of a penalty favouring chosen components (the null weight of Stephens 2017 is
 * c_0 = nullWeight - 1).
 *
 * As in the paper, the simplex constraint is relaxed to the orthant with the objective
 * f(x) = -(1/A)(sum_i a_i log (Lx)_i + sum_k c_k log x_k) + sum_k x_k, A = sum a + sum c, whose
 * minimiser lies on the simplex. Each iteration solves the quadratic model of f at x subject to
 * x >= 0 by a primal active-set method (Nocedal & Wright 2006, section 16.5) and takes a
 * backtracking (Armijo) line search step. Departures for speed and robustness, none changing the optimum:
 * - the Hessian is formed only over the working columns (positive weight, plus the columns whose
 *   gradient most asks for weight, at most max(10, support) of them), so that its cost falls from
 *   N K^2 / 2 to N |C|^2 / 2 once the solution turns sparse; a column left out enters as soon as
 *   its gradient asks, and convergence is always checked on every column;
 * - many columns (a fine theta grid) start on an evenly spread subset, any row the start leaves
 *   unexplained gets its best column added, and the QP is solved in Jacobi-scaled variables;
 * - with more than largeProblemRows rows and no starting point, a deterministic every-m-th-row
 *   subsample (20,000 rows, itself warm-started from a 5,000-row one) is solved first and
 *   warm-starts the full problem;
 * - an accepted step updates the fitted values as u + alpha L p, recomputed only when a weight
 *   is clamped or zeroed;
 * - after each step, a row left with u_r below 1e-3 of the floor a_r / A that the optimum
 *   guarantees gets that weight on its best column (rescueRows): the quadratic model of such a
 *   row asks for a step below the zeroing threshold, which would otherwise stall the fit of a fine
 *   grid; the move lowers f, so the method stays a descent method.
 * Convergence: max_k d_k <= 1 + tolerance, d_k = (1/A)(sum_i a_i L_ik/(Lw)_i + c_k/w_k) at
 * w = x / sum(x); d_k <= 1 for all k are the KKT conditions of the concave problem.
 * Cost: O(N K) per iteration for the gradient plus O(N |C|^2) for the Hessian; memory O(N + K^2)
 * beyond the matrix, which is never copied.
 */
import type { LikelihoodMatrix } from "./likelihood-matrix.ts";

export interface MixtureProblem {
  readonly matrix: LikelihoodMatrix;
  /** Indices of the rows that take part (default: every row). */
  readonly rows?: Int32Array;
  /** Weight of each entry of `rows` (default 1). */
  readonly rowWeights?: Float64Array;
  /** Pseudo-counts c_k >= 0 of the log penalty, one per column (default none). */
  readonly penalty?: Float64Array;
}

export interface MixtureSolverOptions {
  /** Starting weights (warm start); any non-negative vector with a positive sum. */
  readonly initialWeights?: ArrayLike<number>;
  readonly maxIterations?: number;
  /** Stop when max_k d_k <= 1 + tolerance. */
  readonly tolerance?: number;
}

export interface MixtureSolution {
  /** On the simplex. */
  readonly weights: Float64Array;
  readonly iterations: number;
  readonly converged: boolean;
  /** max_k d_k - 1 at the returned weights. */
  readonly optimalityGap: number;
}

export const defaultSolverTolerance = 1e-8;
export const defaultSolverIterations = 500;
export const largeProblemRows = 60_000;
const subsampleTargetRows = 20_000;
const coarseSubsampleRows = 5_000;
const subsampleTolerance = 1e-4;

// Armijo sufficient-decrease constant and step reduction (the paper's defaults are 0.01 and 0.75).
const sufficientDecrease = 0.01;
const stepReduction = 0.5;
const smallestStep = 1e-12;
// Relative rounding error allowed in the objective: a sum of N logs in double precision typically
// loses about sqrt(N) ulps (common practice for long sums); 1e-12 covers that up to N of about 1e7.
const objectiveNoise = 1e-12;
// Weights below this share of the total are set to zero: they cannot matter to the likelihood and
// would keep their columns in the Hessian.
const zeroShare = 1e-13;
const maximumEntering = 10;
const sparseStartColumns = 32;

export function solveMixtureWeights(
  problem: MixtureProblem,
  options: MixtureSolverOptions = {},
): MixtureSolution {
  const { matrix } = problem;
  const columns = matrix.columns;
  const rows = problem.rows ?? identityRows(matrix.rows);
  const rowWeights = problem.rowWeights ?? filledArray(rows.length, 1);
  const penalty = problem.penalty ?? new Float64Array(columns);
  const tolerance = options.tolerance ?? defaultSolverTolerance;
  const maxIterations = options.maxIterations ?? defaultSolverIterations;

  let start = options.initialWeights;
  if (start === undefined && rows.length > largeProblemRows) {
    // Two coarse stages: the first iterations (all columns in the Hessian) run on the smallest
    // subsample, the middle one settles the support, and the full problem only polishes.
    const middle = subsample(rows, rowWeights, penalty, subsampleTargetRows);
    const small = subsample(middle.rows, middle.rowWeights, middle.penalty, coarseSubsampleRows);
    const coarse = solve(
      matrix,
      small.rows,
      small.rowWeights,
      small.penalty,
      undefined,
      subsampleTolerance,
      maxIterations,
    );
    start = solve(
      matrix,
      middle.rows,
      middle.rowWeights,
      middle.penalty,
      coarse.weights,
      subsampleTolerance,
      maxIterations,
    ).weights;
  }
  return solve(matrix, rows, rowWeights, penalty, start, tolerance, maxIterations);
}

/** Every m-th row (deterministic), with the penalty scaled to keep its weight relative to the data. */
function subsample(
  rows: Int32Array,
  rowWeights: Float64Array,
  penalty: Float64Array,
  target: number,
): { rows: Int32Array; rowWeights: Float64Array; penalty: Float64Array } {
  const stride = Math.ceil(rows.length / target);
  const count = Math.ceil(rows.length / stride);
  const subRows = new Int32Array(count);
  const subWeights = new Float64Array(count);
  for (let r = 0; r < count; r++) {
    subRows[r] = rows[r * stride] as number;
    subWeights[r] = rowWeights[r * stride] as number;
  }
  const scaledPenalty = penalty.map((value) => (value * count) / rows.length);
  return { rows: subRows, rowWeights: subWeights, penalty: scaledPenalty };
}

function solve(
  matrix: LikelihoodMatrix,
  rows: Int32Array,
  rowWeights: Float64Array,
  penalty: Float64Array,
  start: ArrayLike<number> | undefined,
  tolerance: number,
  maxIterations: number,
): MixtureSolution {
  const columns = matrix.columns;
  const values = matrix.values;
  const rowCount = rows.length;
  let totalWeight = 0;
  for (let r = 0; r < rowCount; r++) totalWeight += rowWeights[r] as number;
  for (let k = 0; k < columns; k++) totalWeight += penalty[k] as number;

  const x = new Float64Array(columns);
  if (start !== undefined && start.length === columns)
    for (let k = 0; k < columns; k++) x[k] = Math.max(0, start[k] as number);
  let startSum = x.reduce((sum, value) => sum + value, 0);
  if (!(startSum > 0) || !Number.isFinite(startSum)) {
    // Many columns (a fine theta grid): start on an evenly spread subset, so that the first
    // Hessian is small; the other columns enter as their gradients ask.
    const spacing = Math.max(1, Math.floor(columns / sparseStartColumns));
    for (let k = 0; k < columns; k++) x[k] = k === 0 || k % spacing === 0 ? 1 : 0;
    startSum = x.reduce((sum, value) => sum + value, 0);
  }
  for (let k = 0; k < columns; k++) {
    x[k] = (x[k] as number) / startSum;
    // A penalized column must stay strictly positive (its log barrier is infinite at 0).
    if ((penalty[k] as number) > 0 && (x[k] as number) <= 0) x[k] = 1 / columns;
  }

  const fitted = new Float64Array(rowCount);
  const direction = new Float64Array(rowCount);
  const gradient = new Float64Array(columns);
  const ratioSums = new Float64Array(columns);
  computeFitted(values, columns, rows, x, fitted);
  // A row that the starting weights barely explain (its best columns have no weight) makes the
  // quadratic model useless: its gradient entry is ~1/u_r. Give such rows' best columns the mean
  // weight first, so that every u_r >= that weight (row maxima are 1), as a uniform start would.
  if (repairStart(values, columns, rows, x, fitted)) computeFitted(values, columns, rows, x, fitted);
  let objective = objectiveAt(fitted, rowWeights, penalty, x, totalWeight, 0, direction);
  let iterations = 0;
  let gap = Number.POSITIVE_INFINITY;
  for (;;) {
    // Gradient over every column: g_k = -(sum_r a_r L_rk / u_r + c_k / x_k) / A + 1.
    accumulateRatioSums(values, columns, rows, rowWeights, fitted, ratioSums);
    let total = 0;
    for (let k = 0; k < columns; k++) total += x[k] as number;
    gap = Number.NEGATIVE_INFINITY;
    for (let k = 0; k < columns; k++) {
      const barrier = (penalty[k] as number) > 0 ? (penalty[k] as number) / (x[k] as number) : 0;
      const g = -((ratioSums[k] as number) + barrier) / totalWeight + 1;
      gradient[k] = g;
      const d = total * (1 - g);
      if (d - 1 > gap) gap = d - 1;
    }
    if (gap <= tolerance || iterations >= maxIterations) break;
    iterations++;

    // Working columns: positive weight, plus the columns whose gradient asks most strongly to grow
    // (as many as are in the support, at least maximumEntering).
    const working: number[] = [];
    const entering: number[] = [];
    for (let k = 0; k < columns; k++) {
      if ((x[k] as number) > 0) working.push(k);
      // d_k = S (1 - g_k): a column already within a tenth of the tolerance needs no weight.
      else if ((gradient[k] as number) < -0.1 * tolerance) entering.push(k);
    }
    entering.sort((a, b) => (gradient[a] as number) - (gradient[b] as number));
    const enteringCount = Math.min(entering.length, Math.max(maximumEntering, working.length));
    for (let e = 0; e < enteringCount; e++) working.push(entering[e] as number);
    working.sort((a, b) => a - b);
    const size = working.length;
    const workingIndex = Int32Array.from(working);
    const hessian = accumulateHessian(values, columns, rows, rowWeights, fitted, workingIndex);
    let largestDiagonal = 0;
    for (let j = 0; j < size; j++) {
      const k = workingIndex[j] as number;
      const base = j * size;
      for (let m = j; m < size; m++) {
        const value = (hessian[base + m] as number) / totalWeight;
        hessian[base + m] = value;
        hessian[m * size + j] = value;
      }
      const xk = x[k] as number;
      if ((penalty[k] as number) > 0)
        hessian[base + j] = (hessian[base + j] as number) + (penalty[k] as number) / (totalWeight * xk * xk);
      if ((hessian[base + j] as number) > largestDiagonal) largestDiagonal = hessian[base + j] as number;
    }
    // A tiny ridge keeps the model strictly convex when columns are nearly collinear.
    // relative to each diagonal entry, which can differ by many orders of magnitude.
    for (let j = 0; j < size; j++) {
      const diagonal = hessian[j * size + j] as number;
      hessian[j * size + j] = diagonal + 1e-10 * Math.max(diagonal, 1e-300 * largestDiagonal, 1e-300);
    }

    // Quadratic model in y (the new point): 0.5 y'Hy + (g - Hx)'y, y >= 0.
    const linear = new Float64Array(size);
    const current = new Float64Array(size);
    for (let j = 0; j < size; j++) current[j] = x[workingIndex[j] as number] as number;
    for (let j = 0; j < size; j++) {
      let product = 0;
      for (let m = 0; m < size; m++) product += (hessian[j * size + m] as number) * (current[m] as number);
      linear[j] = (gradient[workingIndex[j] as number] as number) - product;
    }
    // Jacobi scaling z = sqrt(diag H) y keeps the bound constraints and makes the QP well
    // conditioned when a column's curvature dwarfs the others' (a row that the current weights
    // barely explain); the solution is mapped back.
    const diagonalRoot = new Float64Array(size);
    for (let j = 0; j < size; j++) diagonalRoot[j] = Math.sqrt(hessian[j * size + j] as number);
    for (let j = 0; j < size; j++) {
      for (let m = 0; m < size; m++)
        hessian[j * size + m] =
          (hessian[j * size + m] as number) / ((diagonalRoot[j] as number) * (diagonalRoot[m] as number));
      linear[j] = (linear[j] as number) / (diagonalRoot[j] as number);
    }
    const scaledCurrent = current.map((value, j) => value * (diagonalRoot[j] as number));
    const target = solveNonNegativeQuadratic(hessian, linear, scaledCurrent, size).map(
      (value, j) => value / (diagonalRoot[j] as number),
    );

    // Search direction p = y - x over the working columns; direction_r = (L p)_r.
    const step = new Float64Array(size);
    let slope = 0;
    for (let j = 0; j < size; j++) {
      step[j] = (target[j] as number) - (current[j] as number);
      slope += (gradient[workingIndex[j] as number] as number) * (step[j] as number);
    }
    if (!(slope < 0)) break; // No descent left at machine precision.
    accumulateDirection(values, columns, rows, workingIndex, step, direction);
    let alpha = 1;
    let accepted = false;
    let trial = Number.POSITIVE_INFINITY;
    // Near the optimum the predicted decrease falls below the rounding error of the objective (a
    // sum of N logs), where the Armijo test only compares noise and would shrink a good Newton
    // step to nothing. There the full step is taken when its objective is level within that noise.
    const noise = objectiveNoise * Math.max(1, Math.abs(objective));
    for (; alpha >= smallestStep; alpha *= stepReduction) {
      trial = objectiveAlong(
        fitted,
        direction,
        alpha,
        rowWeights,
        penalty,
        x,
        workingIndex,
        step,
        totalWeight,
      );
      if (
        trial <= objective + sufficientDecrease * alpha * slope ||
        (alpha === 1 && -slope <= noise && trial <= objective + noise)
      ) {
        accepted = true;
        break;
      }
    }
    if (!accepted) break;
    let sum = 0;
    // The fitted values and objective of the line search stay valid unless a weight is clamped
    // or zeroed below (then they are recomputed): this saves a pass over the matrix and N logs.
    let moved = true;
    for (let j = 0; j < size; j++) {
      const k = workingIndex[j] as number;
      const value = (x[k] as number) + alpha * (step[j] as number);
      if (!(value > 0) && value !== 0) moved = false;
      x[k] = alpha === 1 ? (target[j] as number) : Math.max(0, value);
      sum += x[k] as number;
    }
    for (let k = 0; k < columns; k++)
      if ((penalty[k] as number) === 0 && (x[k] as number) > 0 && (x[k] as number) < zeroShare * sum) {
        x[k] = 0;
        moved = false;
      }
    if (moved) {
      for (let r = 0; r < rowCount; r++) fitted[r] = (fitted[r] as number) + alpha * (direction[r] as number);
      objective = trial;
    } else {
      if (!computeFitted(values, columns, rows, x, fitted)) break;
      objective = objectiveAt(fitted, rowWeights, penalty, x, totalWeight, 0, direction);
    }
    // A row left almost unexplained (its best columns lost their weight) stalls the quadratic
    // model: the step it asks for is below the zeroing threshold. Give its best column the weight
    // the optimum gives at least (rescueRows); that lowers the objective, so the descent holds.
    if (rescueRows(values, columns, rows, rowWeights, totalWeight, x, fitted)) {
      if (!computeFitted(values, columns, rows, x, fitted)) break;
      objective = objectiveAt(fitted, rowWeights, penalty, x, totalWeight, 0, direction);
    }
  }
  let total = 0;
  for (let k = 0; k < columns; k++) total += x[k] as number;
  const weights = x.map((value) => value / total);
  return { weights, iterations, converged: gap <= tolerance, optimalityGap: gap };
}

/** ratioSums_k = sum_r a_r L_rk / u_r. */
function accumulateRatioSums(
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  rowWeights: Float64Array,
  fitted: Float64Array,
  ratioSums: Float64Array,
): void {
  ratioSums.fill(0);
  const count = rows.length;
  // Four rows a pass, so that each sum is loaded and stored once per four rows (as in the
  // Hessian); the rows past a multiple of four follow one at a time.
  const blocked = count - (count % 4);
  for (let r = 0; r < blocked; r += 4) {
    const scale0 = (rowWeights[r] as number) / (fitted[r] as number);
    const scale1 = (rowWeights[r + 1] as number) / (fitted[r + 1] as number);
    const scale2 = (rowWeights[r + 2] as number) / (fitted[r + 2] as number);
    const scale3 = (rowWeights[r + 3] as number) / (fitted[r + 3] as number);
    const offset0 = (rows[r] as number) * columns;
    const offset1 = (rows[r + 1] as number) * columns;
    const offset2 = (rows[r + 2] as number) * columns;
    const offset3 = (rows[r + 3] as number) * columns;
    for (let k = 0; k < columns; k++)
      ratioSums[k] =
        (ratioSums[k] as number) +
        scale0 * (values[offset0 + k] as number) +
        scale1 * (values[offset1 + k] as number) +
        scale2 * (values[offset2 + k] as number) +
        scale3 * (values[offset3 + k] as number);
  }
  for (let r = blocked; r < count; r++) {
    const scale = (rowWeights[r] as number) / (fitted[r] as number);
    const offset = (rows[r] as number) * columns;
    for (let k = 0; k < columns; k++)
      ratioSums[k] = (ratioSums[k] as number) + scale * (values[offset + k] as number);
  }
}

/**
 * Upper triangle of sum_r a_r / u_r^2 L_rC L_rC' over the working columns C (row-major). Each row
 * is scaled by sqrt(a_r) / u_r, and four rows are added per pass over the triangle, so that each
 * Hessian entry is loaded and stored once per four rows (the triangle fits in cache; its loads and
 * stores, not the multiplications, bound the loop).
 */
function accumulateHessian(
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  rowWeights: Float64Array,
  fitted: Float64Array,
  workingIndex: Int32Array,
): Float64Array {
  const size = workingIndex.length;
  const hessian = new Float64Array(size * size);
  const a = new Float64Array(size);
  const b = new Float64Array(size);
  const c = new Float64Array(size);
  const d = new Float64Array(size);
  const e = new Float64Array(size);
  const f = new Float64Array(size);
  const g = new Float64Array(size);
  const h = new Float64Array(size);
  const count = rows.length;
  // The last block takes the remaining rows and zeros (adding 0 leaves every entry's bits as a
  // row-by-row sum would): one loop, so that its optimized code never meets an unvisited tail.
  for (let r = 0; r < count; r += 8) {
    loadScaledRow(a, values, columns, rows, rowWeights, fitted, workingIndex, r);
    loadScaledRow(b, values, columns, rows, rowWeights, fitted, workingIndex, r + 1);
    loadScaledRow(c, values, columns, rows, rowWeights, fitted, workingIndex, r + 2);
    loadScaledRow(d, values, columns, rows, rowWeights, fitted, workingIndex, r + 3);
    loadScaledRow(e, values, columns, rows, rowWeights, fitted, workingIndex, r + 4);
    loadScaledRow(f, values, columns, rows, rowWeights, fitted, workingIndex, r + 5);
    loadScaledRow(g, values, columns, rows, rowWeights, fitted, workingIndex, r + 6);
    loadScaledRow(h, values, columns, rows, rowWeights, fitted, workingIndex, r + 7);
    for (let j = 0; j < size; j++) {
      const aj = a[j] as number;
      const bj = b[j] as number;
      const cj = c[j] as number;
      const dj = d[j] as number;
      const ej = e[j] as number;
      const fj = f[j] as number;
      const gj = g[j] as number;
      const hj = h[j] as number;
      if (aj === 0 && bj === 0 && cj === 0 && dj === 0 && ej === 0 && fj === 0 && gj === 0 && hj === 0)
        continue;
      const base = j * size;
      for (let m = j; m < size; m++)
        hessian[base + m] =
          (hessian[base + m] as number) +
          aj * (a[m] as number) +
          bj * (b[m] as number) +
          cj * (c[m] as number) +
          dj * (d[m] as number) +
          ej * (e[m] as number) +
          fj * (f[m] as number) +
          gj * (g[m] as number) +
          hj * (h[m] as number);
    }
  }
  return hessian;
}

/**
 * Row r over the working columns, scaled by sqrt(a_r) / u_r, into buffer (zeros past the last
 * row). A top-level function:
 * a closure made per call would be a new call target each time, and its caller's optimized code
 * would be thrown away on every call.
 */
function loadScaledRow(
  buffer: Float64Array,
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  rowWeights: Float64Array,
  fitted: Float64Array,
  workingIndex: Int32Array,
  r: number,
): void {
  if (r >= rows.length) {
    buffer.fill(0);
    return;
  }
  const factor = Math.sqrt(rowWeights[r] as number) / (fitted[r] as number);
  const offset = (rows[r] as number) * columns;
  for (let j = 0; j < buffer.length; j++)
    buffer[j] = (values[offset + (workingIndex[j] as number)] as number) * factor;
}

/** direction_r = sum_j L_r,C_j step_j. */
function accumulateDirection(
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  workingIndex: Int32Array,
  step: Float64Array,
  direction: Float64Array,
): void {
  const size = workingIndex.length;
  for (let r = 0; r < rows.length; r++) {
    const offset = (rows[r] as number) * columns;
    let sum = 0;
    for (let j = 0; j < size; j++)
      sum += (values[offset + (workingIndex[j] as number)] as number) * (step[j] as number);
    direction[r] = sum;
  }
}

const poorlyExplainedRow = 1e-8;

function repairStart(
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  x: Float64Array,
  fitted: Float64Array,
): boolean {
  let support = 0;
  let total = 0;
  for (let k = 0; k < columns; k++) {
    if ((x[k] as number) > 0) support++;
    total += x[k] as number;
  }
  const meanWeight = total / Math.max(support, 1);
  const added = new Uint8Array(columns);
  let repaired = false;
  for (let r = 0; r < rows.length; r++) {
    if ((fitted[r] as number) >= poorlyExplainedRow * meanWeight) continue;
    const offset = (rows[r] as number) * columns;
    let best = 0;
    for (let k = 1; k < columns; k++)
      if ((values[offset + k] as number) > (values[offset + best] as number)) best = k;
    if (!added[best]) {
      added[best] = 1;
      repaired = true;
    }
  }
  if (!repaired) return false;
  let sum = 0;
  for (let k = 0; k < columns; k++) {
    if (added[k]) x[k] = (x[k] as number) + meanWeight;
    sum += x[k] as number;
  }
  for (let k = 0; k < columns; k++) x[k] = (x[k] as number) / sum;
  return true;
}

// At the optimum every row has u_r >= a_r / A (the optimality condition for its best column, whose
// scaled likelihood is 1); a row below this share of that floor is far from it.
const rescuedRowShare = 1e-3;

/**
 * For rows with u_r < rescuedRowShare a_r / A: adds a_r / A to the weight of each such row's best
 * column and rescales the weights to their former sum. Each rescued row's log u_r rises by more
 * than log(1 / rescuedRowShare) ~ 6.9 while every row loses less than its a_r / A share, so the
 * objective falls. It never fires near the optimum. Returns whether any row was rescued.
 */
function rescueRows(
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  rowWeights: Float64Array,
  totalWeight: number,
  x: Float64Array,
  fitted: Float64Array,
): boolean {
  let added: Float64Array | null = null;
  for (let r = 0; r < rows.length; r++) {
    const floor = (rowWeights[r] as number) / totalWeight;
    if ((fitted[r] as number) >= rescuedRowShare * floor) continue;
    const offset = (rows[r] as number) * columns;
    let best = 0;
    for (let k = 1; k < columns; k++)
      if ((values[offset + k] as number) > (values[offset + best] as number)) best = k;
    added ??= new Float64Array(columns);
    added[best] = (added[best] as number) + floor;
  }
  if (added === null) return false;
  let before = 0;
  let after = 0;
  for (let k = 0; k < columns; k++) {
    before += x[k] as number;
    x[k] = (x[k] as number) + (added[k] as number);
    after += x[k] as number;
  }
  for (let k = 0; k < columns; k++) x[k] = ((x[k] as number) * before) / after;
  return true;
}

/** u_r = sum_k x_k L_rk over the support of x; false when a row gets likelihood 0. */
function computeFitted(
  values: Float64Array,
  columns: number,
  rows: Int32Array,
  x: Float64Array,
  fitted: Float64Array,
): boolean {
  const support: number[] = [];
  for (let k = 0; k < columns; k++) if ((x[k] as number) > 0) support.push(k);
  const supportIndex = Int32Array.from(support);
  const weights = Float64Array.from(support, (k) => x[k] as number);
  const size = supportIndex.length;
  let positive = true;
  for (let r = 0; r < rows.length; r++) {
    const offset = (rows[r] as number) * columns;
    let sum = 0;
    for (let j = 0; j < size; j++)
      sum += (weights[j] as number) * (values[offset + (supportIndex[j] as number)] as number);
    fitted[r] = sum;
    if (!(sum > 0)) positive = false;
  }
  return positive;
}

/** f at x, whose fitted values are `fitted` (+ alpha * direction). */
function objectiveAt(
  fitted: Float64Array,
  rowWeights: Float64Array,
  penalty: Float64Array,
  x: Float64Array,
  totalWeight: number,
  alpha: number,
  direction: Float64Array,
): number {
  let logSum = 0;
  for (let r = 0; r < fitted.length; r++) {
    const value = (fitted[r] as number) + alpha * (direction[r] as number);
    if (!(value > 0)) return Number.POSITIVE_INFINITY;
    logSum += (rowWeights[r] as number) * Math.log(value);
  }
  let total = 0;
  for (let k = 0; k < x.length; k++) {
    total += x[k] as number;
    if ((penalty[k] as number) > 0) logSum += (penalty[k] as number) * Math.log(x[k] as number);
  }
  return -logSum / totalWeight + total;
}

function objectiveAlong(
  fitted: Float64Array,
  direction: Float64Array,
  alpha: number,
  rowWeights: Float64Array,
  penalty: Float64Array,
  x: Float64Array,
  workingIndex: Int32Array,
  step: Float64Array,
  totalWeight: number,
): number {
  const moved = Float64Array.from(x);
  for (let j = 0; j < workingIndex.length; j++) {
    const k = workingIndex[j] as number;
    const value = (moved[k] as number) + alpha * (step[j] as number);
    if (value < 0 && value > -1e-15) moved[k] = 0;
    else moved[k] = value;
    if ((moved[k] as number) < 0 || ((penalty[k] as number) > 0 && (moved[k] as number) <= 0))
      return Number.POSITIVE_INFINITY;
  }
  return objectiveAt(fitted, rowWeights, penalty, moved, totalWeight, alpha, direction);
}

/**
 * min 0.5 y'Hy + c'y subject to y >= 0, for a small dense positive-definite H (row-major, n x n),
 * by the primal active-set method from the feasible start y0 (Nocedal & Wright 2006, Algorithm 16.3).
 */
export function solveNonNegativeQuadratic(
  hessian: Float64Array,
  linear: Float64Array,
  start: Float64Array,
  size: number,
): Float64Array {
  // Starting from the support of `start` costs one Cholesky per column to drop; the solutions are
  // sparse, so growing the support from zero (y = 0 is feasible) takes far fewer steps when many
  // columns are in play.
  const y = size > 24 ? new Float64Array(size) : Float64Array.from(start);
  const free = new Uint8Array(size);
  for (let j = 0; j < size; j++) free[j] = (y[j] as number) > 0 ? 1 : 0;
  const gradient = new Float64Array(size);
  let largestDiagonal = 0;
  for (let j = 0; j < size; j++) largestDiagonal = Math.max(largestDiagonal, hessian[j * size + j] as number);
  // Nearly collinear columns (neighbouring atoms of a fine grid) make H_FF so ill-conditioned that
  // a column just let in can get a rounding-error step of the wrong sign and leave at once. Then
  // the step is recomputed with a Levenberg-Marquardt ridge, grown until the column moves in;
  // the QP is only a search direction, so this cannot change the optimum.
  let ridge = 0;
  let entered = -1;
  let atFreeMinimum = false;
  const maxSteps = 10 * size + 50;
  for (let iteration = 0; iteration < maxSteps; iteration++) {
    for (let j = 0; j < size; j++) {
      let sum = linear[j] as number;
      for (let m = 0; m < size; m++) sum += (hessian[j * size + m] as number) * (y[m] as number);
      gradient[j] = sum;
    }
    const freeIndex: number[] = [];
    for (let j = 0; j < size; j++) if (free[j]) freeIndex.push(j);
    // After a full Newton step y minimises the model on the free set: re-solving would only chase
    // rounding noise, so go straight to the multiplier test.
    const newton =
      freeIndex.length > 0 && !atFreeMinimum
        ? solveFreeSystem(hessian, gradient, freeIndex, size, ridge)
        : [];
    let stepNorm = 0;
    for (const value of newton) stepNorm = Math.max(stepNorm, Math.abs(value));
    let yNorm = 0;
    for (let j = 0; j < size; j++) yNorm = Math.max(yNorm, Math.abs(y[j] as number));
    if (atFreeMinimum || stepNorm <= 1e-15 * (1 + yNorm)) {
      atFreeMinimum = false;
      let entering = -1;
      // In Jacobi-scaled units (unit diagonal) a multiplier is comparable across columns.
      let mostNegative = -1e-13;
      for (let j = 0; j < size; j++) {
        if (!free[j] && (gradient[j] as number) < mostNegative) {
          mostNegative = gradient[j] as number;
          entering = j;
        }
      }
      if (entering < 0) return y;
      free[entering] = 1;
      entered = entering;
      continue;
    }
    let alpha = 1;
    let blocking = -1;
    freeIndex.forEach((j, position) => {
      const p = newton[position] as number;
      if (p < 0) {
        const ratio = -(y[j] as number) / p;
        if (ratio < alpha) {
          alpha = ratio;
          blocking = j;
        }
      }
    });
    if (blocking >= 0 && blocking === entered && alpha === 0) {
      if (ridge >= largestDiagonal * 1e6) return y;
      ridge = ridge === 0 ? 1e-8 * largestDiagonal : ridge * 100;
      continue;
    }
    entered = -1;
    freeIndex.forEach((j, position) => {
      y[j] = (y[j] as number) + alpha * (newton[position] as number);
    });
    if (blocking >= 0) {
      y[blocking] = 0;
      free[blocking] = 0;
    } else atFreeMinimum = true;
  }
  return y;
}

/** Solves H_FF p = -g_F by Cholesky (with a growing ridge if H_FF is not numerically positive). */
function solveFreeSystem(
  hessian: Float64Array,
  gradient: Float64Array,
  freeIndex: number[],
  size: number,
  extraRidge: number,
): number[] {
  const n = freeIndex.length;
  let ridge = extraRidge;
  for (let attempt = 0; attempt < 20; attempt++) {
    const factor = new Float64Array(n * n);
    let ok = true;
    for (let a = 0; a < n && ok; a++) {
      for (let b = 0; b <= a; b++) {
        let sum = hessian[(freeIndex[a] as number) * size + (freeIndex[b] as number)] as number;
        if (a === b) sum += ridge;
        for (let c = 0; c < b; c++) sum -= (factor[a * n + c] as number) * (factor[b * n + c] as number);
        if (a === b) {
          if (!(sum > 0)) {
            ok = false;
            break;
          }
          factor[a * n + a] = Math.sqrt(sum);
        } else factor[a * n + b] = sum / (factor[b * n + b] as number);
      }
    }
    if (!ok) {
      let diagonal = 0;
      for (const j of freeIndex) diagonal = Math.max(diagonal, hessian[j * size + j] as number);
      ridge = ridge === 0 ? 1e-12 * Math.max(diagonal, 1e-300) : ridge * 100;
      if (ridge < extraRidge) ridge = extraRidge;
      continue;
    }
    const solution = new Array<number>(n);
    for (let a = 0; a < n; a++) {
      let sum = -(gradient[freeIndex[a] as number] as number);
      for (let c = 0; c < a; c++) sum -= (factor[a * n + c] as number) * (solution[c] as number);
      solution[a] = sum / (factor[a * n + a] as number);
    }
    for (let a = n - 1; a >= 0; a--) {
      let sum = solution[a] as number;
      for (let c = a + 1; c < n; c++) sum -= (factor[c * n + a] as number) * (solution[c] as number);
      solution[a] = sum / (factor[a * n + a] as number);
    }
    return solution;
  }
  return new Array<number>(n).fill(0);
}

function identityRows(count: number): Int32Array {
  const rows = new Int32Array(count);
  for (let r = 0; r < count; r++) rows[r] = r;
  return rows;
}

function filledArray(count: number, value: number): Float64Array {
  return new Float64Array(count).fill(value);
}

/** sum_i a_i log sum_k w_k L_ik, with the row maxima added back (the unpenalized log-likelihood). */
export function mixtureLogLikelihood(problem: MixtureProblem, weights: ArrayLike<number>): number {
  const { matrix } = problem;
  const columns = matrix.columns;
  const rows = problem.rows;
  const count = rows ? rows.length : matrix.rows;
  let total = 0;
  for (let r = 0; r < count; r++) {
    const i = rows ? (rows[r] as number) : r;
    const offset = i * columns;
    let sum = 0;
    for (let k = 0; k < columns; k++) {
      const w = weights[k] as number;
      if (w > 0) sum += w * (matrix.values[offset + k] as number);
    }
    const weight = problem.rowWeights ? (problem.rowWeights[r] as number) : 1;
    total += weight * (Math.log(sum) + (matrix.logRowMax[i] as number));
  }
  return total;
}
