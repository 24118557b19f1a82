/**
 * The distribution of true effects (relative lifts) across a program's ideas: a weighted
 * mixture of simple components. Fitted priors (fitEffectPrior) use point, normal and uniform
 * components (their posteriors add truncated normals); assumed priors (assumedPrior) use a null point mass with half-normal or half-t
 * sizes of real wins and losses (statistics.md sections 5 and 7).
 */
export type PriorComponent =
  /** Point mass at `at` (the null component is `{ kind: "point", at: 0 }`). */
  | { readonly kind: "point"; readonly at: number }
  /** Normal N(mean, scale^2); the symmetric family uses mean 0. */
  | { readonly kind: "normal"; readonly mean: number; readonly scale: number }
  /** Uniform on [lower, upper]. */
  | { readonly kind: "uniform"; readonly lower: number; readonly upper: number }
  /** |theta| half-normal with the given scale, on the side of `sign`. */
  | { readonly kind: "halfNormal"; readonly sign: 1 | -1; readonly scale: number }
  /** |theta| half-t with df degrees of freedom and the given scale, on the side of `sign`. */
  | { readonly kind: "halfT"; readonly sign: 1 | -1; readonly scale: number; readonly df: number }
  /**
   * N(mean, scale^2) restricted to [lower, upper] (bounds may be infinite). The exact posterior of
   * a uniform prior component under a normal likelihood (statistics.md section 5).
   */
  | {
      readonly kind: "truncatedNormal";
      readonly mean: number;
      readonly scale: number;
      readonly lower: number;
      readonly upper: number;
    };

export interface WeightedComponent {
  readonly component: PriorComponent;
  readonly weight: number;
}

export type PriorFamily = "symmetric" | "skewed" | "grid" | "assumed";

export interface EffectPrior {
  readonly family: PriorFamily;
  /** Weights sum to 1. */
  readonly components: readonly WeightedComponent[];
}

export function isNullComponent(component: PriorComponent): boolean {
  return component.kind === "point" && component.at === 0;
}

/** Total weight of the point mass at zero. */
export function nullShare(prior: EffectPrior): number {
  let total = 0;
  for (const { component, weight } of prior.components) if (isNullComponent(component)) total += weight;
  return total;
}
