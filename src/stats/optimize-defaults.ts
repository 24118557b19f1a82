/**
 * The design (z*, n) that maximises the expected value of a period of testing (statistics.md
 * section 7): a grid over (z*, log n), then Nelder-Mead refinement in (z*, log n) from the best
 * grid point (Nelder & Mead 1965, "A simplex method for function minimization", Computer
 * Journal 7:308), then a check that the point is a maximum: the value at the 8 neighbouring
 * points, a central-difference gradient and curvature.
 * The value is computed exactly by integration over the prior (test-value.ts), so the
 * optimiser sees a smooth deterministic function; the only kink is where the backlog stops
 * binding (n = D t k' / (k M)), which the grid brackets.
 */
import { StatsInputError } from "./errors.ts";
import { type ProgramEconomics, testsPerPeriod, valuePerPeriod } from "./test-value.ts";

/** The search box: one-sided threshold z* and n per arm. */
export interface DesignBounds {
  readonly minThreshold: number;
  readonly maxThreshold: number;
  readonly minNPerArm: number;
  readonly maxNPerArm: number;
}

/** Default threshold range: z* from -3 (ship almost everything) to 8 (ship almost nothing). */
export const defaultThresholdRange = { min: -3, max: 8 } as const;

/** Smallest n per arm searched (a test with fewer users per arm is not a test). */
export const minimumNPerArm = 10;

/**
 * The search box for a program: n per arm from 10 up to the largest n whose run fits in
 * `maxDays` (default: the period), n <= maxDays t / k.
 */
export function designBounds(program: ProgramEconomics, maxDays?: number): DesignBounds {
  const days = maxDays ?? program.periodDays;
  if (!(days > 0) || !Number.isFinite(days))
    throw new StatsInputError("maxDays", "a positive finite number", days);
  const maxNPerArm = (days * program.dailyTraffic) / program.arms;
  if (!(maxNPerArm >= minimumNPerArm * 2)) {
    throw new StatsInputError(
      "maxDays * dailyTraffic / arms",
      `at least ${minimumNPerArm * 2} users per arm`,
      maxNPerArm,
    );
  }
  return {
    minThreshold: defaultThresholdRange.min,
    maxThreshold: defaultThresholdRange.max,
    minNPerArm: minimumNPerArm,
    maxNPerArm,
  };
}

export interface NeighbourValue {
  readonly threshold: number;
  readonly nPerArm: number;
  readonly expectedValue: number;
}

/** Evidence that the optimum is a maximum. */
export interface OptimumCheck {
  /** Steps used: in z* and in log n. */
  readonly step: { readonly threshold: number; readonly logNPerArm: number };
  /** The value at the neighbouring points inside the box (z* +- step, log n +- step). */
  readonly neighbours: readonly NeighbourValue[];
  /** Central-difference gradient of the period value in (z*, log n). */
  readonly gradient: { readonly threshold: number; readonly logNPerArm: number };
  /** Central-difference second derivatives (NaN across a bound). */
  readonly curvature: { readonly threshold: number; readonly logNPerArm: number };
  /** No neighbour beats the optimum. */
  readonly isMaximum: boolean;
  /** Which bounds the optimum sits on (e.g. "maxNPerArm": the run-length cap binds). */
  readonly atBounds: readonly ("minThreshold" | "maxThreshold" | "minNPerArm" | "maxNPerArm")[];
  /** The backlog, not the traffic, limits the tests per period at the optimum. */
  readonly backlogBinds: boolean;
}

export interface DefaultsOptimum {
  readonly threshold: number;
  readonly nPerArm: number;
  readonly expectedValue: number;
  /** Best point of the grid, before refinement. */
  readonly gridBest: NeighbourValue;
  readonly evaluations: number;
  readonly check: OptimumCheck;
  readonly bounds: DesignBounds;
}

export interface OptimizeOptions {
  readonly maxDays?: number;
  /** Grid size in z* (default 34: steps of 1/3) and log n (default 31). */
  readonly thresholdSteps?: number;
  readonly nSteps?: number;
}

/** Maximises the expected value per period over (z*, n) in the box. */
export function optimizeDefaults(program: ProgramEconomics, options: OptimizeOptions = {}): DefaultsOptimum {
  const bounds = designBounds(program, options.maxDays);
  return optimizeInBounds(program, bounds, options);
}

export function optimizeInBounds(
  program: ProgramEconomics,
  bounds: DesignBounds,
  options: OptimizeOptions = {},
): DefaultsOptimum {
  const thresholdSteps = options.thresholdSteps ?? 34;
  const nSteps = options.nSteps ?? 31;
  const logMin = Math.log(bounds.minNPerArm);
  const logMax = Math.log(bounds.maxNPerArm);
  let evaluations = 0;
  const value = (threshold: number, logN: number): number => {
    evaluations++;
    return valuePerPeriod(program, threshold, Math.exp(logN));
  };
  // Grid.
  let best = { threshold: bounds.minThreshold, logN: logMin, value: Number.NEGATIVE_INFINITY };
  const thresholdStep = (bounds.maxThreshold - bounds.minThreshold) / (thresholdSteps - 1);
  const logStep = (logMax - logMin) / (nSteps - 1);
  for (let i = 0; i < thresholdSteps; i++) {
    const threshold = bounds.minThreshold + i * thresholdStep;
    for (let j = 0; j < nSteps; j++) {
      const logN = logMin + j * logStep;
      const candidate = value(threshold, logN);
      if (candidate > best.value) best = { threshold, logN, value: candidate };
    }
  }
  const gridBest = { threshold: best.threshold, nPerArm: Math.exp(best.logN), expectedValue: best.value };
  // The backlog kink: bracket it explicitly so that a kink optimum is not missed between grid lines.
  const kinkN =
    (program.periodDays * program.dailyTraffic * (program.arms - 1)) / (program.arms * program.backlog);
  const clampPoint = (threshold: number, logN: number): [number, number] => [
    Math.min(bounds.maxThreshold, Math.max(bounds.minThreshold, threshold)),
    Math.min(logMax, Math.max(logMin, logN)),
  ];
  const refined = nelderMead(
    (point) => {
      const [threshold, logN] = clampPoint(point[0], point[1]);
      return -value(threshold, logN);
    },
    [best.threshold, best.logN],
    [thresholdStep / 2, logStep / 2],
  );
  let [threshold, logN] = clampPoint(refined.point[0], refined.point[1]);
  let optimumValue = value(threshold, logN);
  if (kinkN > bounds.minNPerArm && kinkN < bounds.maxNPerArm) {
    // Best threshold at the kink, by a one-dimensional search; keep it if it beats the simplex.
    const atKink = goldenSectionMaximum(
      (z) => value(z, Math.log(kinkN)),
      bounds.minThreshold,
      bounds.maxThreshold,
      threshold,
    );
    if (atKink.value > optimumValue) {
      threshold = atKink.point;
      logN = Math.log(kinkN);
      optimumValue = atKink.value;
    }
  }
  if (gridBest.expectedValue > optimumValue) {
    threshold = best.threshold;
    logN = best.logN;
    optimumValue = best.value;
  }
  const check = checkOptimum(program, bounds, threshold, logN, optimumValue, value);
  return {
    threshold,
    nPerArm: Math.exp(logN),
    expectedValue: optimumValue,
    gridBest,
    evaluations,
    check,
    bounds,
  };
}

function checkOptimum(
  program: ProgramEconomics,
  bounds: DesignBounds,
  threshold: number,
  logN: number,
  optimumValue: number,
  value: (threshold: number, logN: number) => number,
): OptimumCheck {
  const thresholdStep = 1e-3;
  const logStep = 1e-3;
  const logMin = Math.log(bounds.minNPerArm);
  const logMax = Math.log(bounds.maxNPerArm);
  const boundSlack = 1e-9;
  const atBounds: OptimumCheck["atBounds"][number][] = [];
  if (threshold <= bounds.minThreshold + boundSlack) atBounds.push("minThreshold");
  if (threshold >= bounds.maxThreshold - boundSlack) atBounds.push("maxThreshold");
  if (logN <= logMin + boundSlack) atBounds.push("minNPerArm");
  if (logN >= logMax - boundSlack) atBounds.push("maxNPerArm");
  const neighbours: NeighbourValue[] = [];
  for (const dz of [-1, 0, 1]) {
    for (const dn of [-1, 0, 1]) {
      if (dz === 0 && dn === 0) continue;
      const z = threshold + dz * thresholdStep;
      const l = logN + dn * logStep;
      if (z < bounds.minThreshold || z > bounds.maxThreshold || l < logMin || l > logMax) continue;
      neighbours.push({ threshold: z, nPerArm: Math.exp(l), expectedValue: value(z, l) });
    }
  }
  const at = (dz: number, dn: number) => {
    const z = threshold + dz * thresholdStep;
    const l = logN + dn * logStep;
    if (z < bounds.minThreshold || z > bounds.maxThreshold || l < logMin || l > logMax) return Number.NaN;
    return value(z, l);
  };
  const zPlus = at(1, 0);
  const zMinus = at(-1, 0);
  const nPlus = at(0, 1);
  const nMinus = at(0, -1);
  // Values are compared with a relative slack for rounding in the integrals.
  const slack = 1e-10 * Math.max(1, Math.abs(optimumValue));
  return {
    step: { threshold: thresholdStep, logNPerArm: logStep },
    neighbours,
    gradient: {
      threshold: (zPlus - zMinus) / (2 * thresholdStep),
      logNPerArm: (nPlus - nMinus) / (2 * logStep),
    },
    curvature: {
      threshold: (zPlus - 2 * optimumValue + zMinus) / (thresholdStep * thresholdStep),
      logNPerArm: (nPlus - 2 * optimumValue + nMinus) / (logStep * logStep),
    },
    isMaximum: neighbours.every((neighbour) => neighbour.expectedValue <= optimumValue + slack),
    atBounds,
    backlogBinds:
      testsPerPeriod(program, Math.exp(logN)) * (program.arms - 1) >= program.backlog * (1 - 1e-9),
  };
}

export interface SimplexResult {
  readonly point: [number, number];
  readonly value: number;
}

/** Nelder-Mead minimisation in two dimensions with the standard coefficients (1, 2, 1/2, 1/2). */
export function nelderMead(
  f: (point: [number, number]) => number,
  start: [number, number],
  steps: [number, number],
): SimplexResult {
  let simplex: { point: [number, number]; value: number }[] = [
    { point: start, value: f(start) },
    { point: [start[0] + steps[0], start[1]], value: 0 },
    { point: [start[0], start[1] + steps[1]], value: 0 },
  ];
  simplex[1]!.value = f(simplex[1]!.point);
  simplex[2]!.value = f(simplex[2]!.point);
  for (let iteration = 0; iteration < 400; iteration++) {
    simplex.sort((left, right) => left.value - right.value);
    const [bestVertex, middleVertex, worstVertex] = simplex as [
      (typeof simplex)[number],
      (typeof simplex)[number],
      (typeof simplex)[number],
    ];
    const spread = Math.max(
      Math.abs(worstVertex.point[0] - bestVertex.point[0]),
      Math.abs(worstVertex.point[1] - bestVertex.point[1]),
      Math.abs(middleVertex.point[0] - bestVertex.point[0]),
      Math.abs(middleVertex.point[1] - bestVertex.point[1]),
    );
    const valueSpread = Math.abs(worstVertex.value - bestVertex.value);
    if (spread < 1e-9 || (spread < 1e-6 && valueSpread <= 1e-14 * Math.max(1, Math.abs(bestVertex.value))))
      break;
    const centroid: [number, number] = [
      (bestVertex.point[0] + middleVertex.point[0]) / 2,
      (bestVertex.point[1] + middleVertex.point[1]) / 2,
    ];
    const along = (factor: number): [number, number] => [
      centroid[0] + factor * (worstVertex.point[0] - centroid[0]),
      centroid[1] + factor * (worstVertex.point[1] - centroid[1]),
    ];
    const reflected = along(-1);
    const reflectedValue = f(reflected);
    if (reflectedValue < bestVertex.value) {
      const expanded = along(-2);
      const expandedValue = f(expanded);
      simplex[2] =
        expandedValue < reflectedValue
          ? { point: expanded, value: expandedValue }
          : { point: reflected, value: reflectedValue };
      continue;
    }
    if (reflectedValue < middleVertex.value) {
      simplex[2] = { point: reflected, value: reflectedValue };
      continue;
    }
    const contracted = reflectedValue < worstVertex.value ? along(-0.5) : along(0.5);
    const contractedValue = f(contracted);
    if (contractedValue < Math.min(reflectedValue, worstVertex.value)) {
      simplex[2] = { point: contracted, value: contractedValue };
      continue;
    }
    simplex = simplex.map((vertex, index) => {
      if (index === 0) return vertex;
      const point: [number, number] = [
        bestVertex.point[0] + 0.5 * (vertex.point[0] - bestVertex.point[0]),
        bestVertex.point[1] + 0.5 * (vertex.point[1] - bestVertex.point[1]),
      ];
      return { point, value: f(point) };
    });
  }
  simplex.sort((left, right) => left.value - right.value);
  return simplex[0]!;
}

/**
 * Maximum of a unimodal function on [a, b] by golden-section search (Kiefer 1953), started on
 * a bracket around `guess` found by stepping outwards.
 */
export function goldenSectionMaximum(
  f: (x: number) => number,
  a: number,
  b: number,
  guess: number,
): { point: number; value: number } {
  // Bracket by sampling: golden section needs a unimodal interval.
  const samples = 41;
  let bestIndex = 0;
  let bestValue = Number.NEGATIVE_INFINITY;
  const step = (b - a) / (samples - 1);
  for (let i = 0; i < samples; i++) {
    const candidate = f(a + i * step);
    if (candidate > bestValue) {
      bestValue = candidate;
      bestIndex = i;
    }
  }
  const guessValue = f(guess);
  let lower = Math.max(a, a + (bestIndex - 1) * step);
  let upper = Math.min(b, a + (bestIndex + 1) * step);
  if (guessValue > bestValue) {
    lower = Math.max(a, guess - step);
    upper = Math.min(b, guess + step);
  }
  const ratio = (Math.sqrt(5) - 1) / 2;
  let x1 = upper - ratio * (upper - lower);
  let x2 = lower + ratio * (upper - lower);
  let f1 = f(x1);
  let f2 = f(x2);
  for (let iteration = 0; iteration < 200 && upper - lower > 1e-10; iteration++) {
    if (f1 < f2) {
      lower = x1;
      x1 = x2;
      f1 = f2;
      x2 = lower + ratio * (upper - lower);
      f2 = f(x2);
    } else {
      upper = x2;
      x2 = x1;
      f2 = f1;
      x1 = upper - ratio * (upper - lower);
      f1 = f(x1);
    }
  }
  const point = (lower + upper) / 2;
  return { point, value: f(point) };
}
