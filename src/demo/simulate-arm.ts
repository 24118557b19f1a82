/**
 * Unit-level data of one arm of a demo test, simulated in one batch of units.
 * Converters: Binomial(units, rate), drawn by its normal approximation rounded to a whole number
 * (every demo batch has hundreds of expected converters, where the approximation is close; common
 * practice). Spend: each paying unit spends an exact log-normal draw, so revenue per unit is
 * zero-inflated and heavy-tailed as in a real shop, and its sample sd is as noisy as real data's.
 */
import type { RandomSource } from "../stats/random.ts";

/** Running sums of an arm; add batches with `addArmBatch`. */
export interface ArmTotals {
  /** Units analysed (after any units lost to a sample ratio mismatch). */
  units: number;
  conversions: number;
  spend: number;
  spendSquared: number;
}

export function emptyArmTotals(): ArmTotals {
  return { units: 0, conversions: 0, spend: 0, spendSquared: 0 };
}

export interface ArmBatch {
  /** Units assigned to the arm in this batch. */
  readonly assigned: number;
  /** Units lost before analysis; they would neither have converted nor spent. */
  readonly lost: number;
  readonly rate: number;
  /** When given, each converter spends exp(logMean + logSd Z) * multiplier. */
  readonly spend?: { readonly logMean: number; readonly logSd: number; readonly multiplier: number };
}

export function binomialApproximate(random: RandomSource, units: number, rate: number): number {
  const mean = units * rate;
  const sd = Math.sqrt(mean * (1 - rate));
  return Math.min(units, Math.max(0, Math.round(mean + sd * random.normal())));
}

export function addArmBatch(totals: ArmTotals, batch: ArmBatch, random: RandomSource): void {
  // Lost units are taken from the non-converters, so converters are drawn on the assigned units.
  const converters = Math.min(
    batch.assigned - batch.lost,
    binomialApproximate(random, batch.assigned, batch.rate),
  );
  totals.units += batch.assigned - batch.lost;
  totals.conversions += converters;
  if (batch.spend) {
    const { logMean, logSd, multiplier } = batch.spend;
    for (let k = 0; k < converters; k++) {
      const amount = multiplier * Math.exp(logMean + logSd * random.normal());
      totals.spend += amount;
      totals.spendSquared += amount * amount;
    }
  }
}

/** Per-unit mean and sample sd (n - 1) of spend, zeros of non-payers included. */
export function spendMoments(totals: ArmTotals): { mean: number; sd: number } {
  const mean = totals.spend / totals.units;
  const variance = Math.max(0, (totals.spendSquared - totals.units * mean * mean) / (totals.units - 1));
  return { mean, sd: Math.sqrt(variance) };
}
