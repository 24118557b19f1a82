/**
 * Draws of a true effect theta from an EffectPrior (any mixture of point, normal, uniform,
 * half-normal, half-t and truncated-normal components), for the backlog forecast (statistics.md section 8).
 *
 * - Component choice: inverse cdf of the mixture weights (one uniform), binary search when
 *   the prior has many components (the grid family).
 * - half-normal: |Z| scale. half-t: |Z| / sqrt(V / df) scale with V ~ chi-square(df); V is a sum
 *   of df squared normals for whole df up to 30 (exact and cheap for the fat shape's 3 df),
 *   otherwise 2 Gamma(df / 2) by Marsaglia & Tsang (2000), "A simple method for generating
 *   gamma variables", ACM TOMS 26:363 (with the U^(1/a) boost for shape below 1).
 *
 * The sampler allocates nothing per draw, so a forecast of millions of draws stays fast.
 * Complexity: O(log K) per draw for K components (O(K) to build).
 */
import { normalCdf, normalQuantile } from "./distributions.ts";
import type { EffectPrior, PriorComponent } from "./effect-prior.ts";
import { requireFinite, requirePositive, StatsInputError } from "./errors.ts";
import type { RandomSource } from "./random.ts";

/** Draws one theta from the prior using the given randomness. */
export type PriorSampler = (random: RandomSource) => number;

/** Whole degrees of freedom up to this use a sum of squared normals for the chi-square draw. */
const maximumSummedDegreesOfFreedom = 30;

/** Validates a prior and returns a sampler for it. Throws StatsInputError on a malformed prior. */
export function createPriorSampler(prior: EffectPrior): PriorSampler {
  const components = prior.components;
  if (components.length === 0) throw new StatsInputError("prior.components", "non-empty", "[]");
  let totalWeight = 0;
  for (const [index, { component, weight }] of components.entries()) {
    if (!Number.isFinite(weight) || weight < 0) {
      throw new StatsInputError(`prior.components[${index}].weight`, "a finite number >= 0", weight);
    }
    validateComponent(component, `prior.components[${index}]`);
    totalWeight += weight;
  }
  if (!(totalWeight > 0))
    throw new StatsInputError("prior weights", "summing to a positive number", totalWeight);
  // Cumulative weights normalised to 1, so that rounding in the stored weights never leaves a gap.
  const cumulative = new Float64Array(components.length);
  let running = 0;
  for (const [index, { weight }] of components.entries()) {
    running += weight / totalWeight;
    cumulative[index] = running;
  }
  cumulative[components.length - 1] = 1;
  const drawers = components.map(({ component }) => componentSampler(component));
  if (drawers.length === 1) return drawers[0]!;
  const last = drawers.length - 1;
  if (drawers.length <= 16) {
    return (random) => {
      const u = random.uniform();
      let index = 0;
      while (index < last && u >= cumulative[index]!) index++;
      return drawers[index]!(random);
    };
  }
  return (random) => {
    const u = random.uniform();
    let low = 0;
    let high = last;
    while (low < high) {
      const middle = (low + high) >>> 1;
      if (u < cumulative[middle]!) high = middle;
      else low = middle + 1;
    }
    return drawers[low]!(random);
  };
}

/** One draw of theta from the prior (builds a sampler; use createPriorSampler for many draws). */
export function samplePrior(prior: EffectPrior, random: RandomSource): number {
  return createPriorSampler(prior)(random);
}

function validateComponent(component: PriorComponent, path: string): void {
  switch (component.kind) {
    case "point":
      requireFinite(`${path}.at`, component.at);
      return;
    case "normal":
      requireFinite(`${path}.mean`, component.mean);
      if (!Number.isFinite(component.scale) || component.scale < 0) {
        throw new StatsInputError(`${path}.scale`, "a finite number >= 0", component.scale);
      }
      return;
    case "uniform":
      requireFinite(`${path}.lower`, component.lower);
      requireFinite(`${path}.upper`, component.upper);
      if (component.upper < component.lower) {
        throw new StatsInputError(`${path}.upper`, `at least lower (${component.lower})`, component.upper);
      }
      return;
    case "halfNormal":
      requirePositive(`${path}.scale`, component.scale);
      return;
    case "halfT":
      requirePositive(`${path}.scale`, component.scale);
      requirePositive(`${path}.df`, component.df);
      return;
    case "truncatedNormal":
      requireFinite(`${path}.mean`, component.mean);
      requirePositive(`${path}.scale`, component.scale);
      if (
        Number.isNaN(component.lower) ||
        Number.isNaN(component.upper) ||
        !(component.upper > component.lower)
      ) {
        throw new StatsInputError(`${path}.upper`, `above lower (${component.lower})`, component.upper);
      }
      return;
  }
  // A prior read from stored JSON may carry a kind this version does not know.
  throw new StatsInputError(
    `${path}.kind`,
    "point, normal, uniform, halfNormal, halfT or truncatedNormal",
    (component as { kind: unknown }).kind,
  );
}

function componentSampler(component: PriorComponent): PriorSampler {
  switch (component.kind) {
    case "point": {
      const at = component.at;
      return () => at;
    }
    case "normal": {
      const { mean, scale } = component;
      return (random) => mean + scale * random.normal();
    }
    case "uniform": {
      const { lower } = component;
      const width = component.upper - component.lower;
      return (random) => lower + width * random.uniform();
    }
    case "halfNormal": {
      const signedScale = component.sign * component.scale;
      return (random) => signedScale * Math.abs(random.normal());
    }
    case "halfT": {
      const signedScale = component.sign * component.scale;
      const df = component.df;
      const chiSquare = chiSquareSampler(df);
      return (random) => {
        const z = Math.abs(random.normal());
        return (signedScale * z) / Math.sqrt(chiSquare(random) / df);
      };
    }
    case "truncatedNormal":
      return truncatedNormalSampler(component.mean, component.scale, component.lower, component.upper);
  }
  throw new StatsInputError(
    "component.kind",
    "a known component kind",
    (component as { kind: unknown }).kind,
  );
}

/**
 * N(mean, scale^2) restricted to [lower, upper] by inversion of the cdf. The interval is
 * reflected into the lower half of the standard normal first, where Phi keeps its relative
 * accuracy, so that a window far in the upper tail is not lost to 1 - Phi cancelling.
 */
function truncatedNormalSampler(mean: number, scale: number, lower: number, upper: number): PriorSampler {
  const standardLower = (lower - mean) / scale;
  const standardUpper = (upper - mean) / scale;
  const reflect = standardLower + standardUpper > 0;
  const low = reflect ? -standardUpper : standardLower;
  const high = reflect ? -standardLower : standardUpper;
  const cdfLow = normalCdf(low);
  const cdfWidth = normalCdf(high) - cdfLow;
  const sign = reflect ? -1 : 1;
  return (random) => {
    const z = normalQuantile(cdfLow + cdfWidth * random.uniform());
    // Rounding can put the quantile a hair outside the window; clamp it back.
    const standard = Math.min(high, Math.max(low, z));
    return mean + scale * sign * standard;
  };
}

/** A chi-square(df) sampler: a sum of squared normals for small whole df, else 2 Gamma(df/2). */
export function chiSquareSampler(df: number): (random: RandomSource) => number {
  if (Number.isInteger(df) && df <= maximumSummedDegreesOfFreedom) {
    return (random) => {
      let sum = 0;
      for (let k = 0; k < df; k++) {
        const z = random.normal();
        sum += z * z;
      }
      return sum;
    };
  }
  const gamma = gammaSampler(df / 2);
  return (random) => 2 * gamma(random);
}

/**
 * A Gamma(shape, 1) sampler by Marsaglia & Tsang (2000); for shape < 1 it draws
 * Gamma(shape + 1) U^(1/shape) (their section 6).
 */
export function gammaSampler(shape: number): (random: RandomSource) => number {
  const boosted = shape < 1;
  const a = boosted ? shape + 1 : shape;
  const d = a - 1 / 3;
  const c = 1 / Math.sqrt(9 * d);
  const inverseShape = 1 / shape;
  return (random) => {
    let value: number;
    for (;;) {
      const x = random.normal();
      const base = 1 + c * x;
      if (base <= 0) continue;
      const v = base * base * base;
      const u = random.uniform();
      const xSquared = x * x;
      if (u < 1 - 0.0331 * xSquared * xSquared || Math.log(u) < 0.5 * xSquared + d * (1 - v + Math.log(v))) {
        value = d * v;
        break;
      }
    }
    if (!boosted) return value;
    // 1 - uniform() lies in (0, 1], so the power never meets log(0).
    return value * (1 - random.uniform()) ** inverseShape;
  };
}
