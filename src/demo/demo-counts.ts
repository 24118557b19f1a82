/**
 * Headline counts of a generated demo, computed from its truth rows: what the CLI prints and what
 * the tests compare with the parameters. Experiment-level counts read the primary rows only.
 */
import type { DemoResultTruth } from "./generate-demo.ts";

export interface DemoCounts {
  readonly experiments: number;
  readonly results: number;
  readonly secondaryResults: number;
  readonly teams: Readonly<Record<string, number>>;
  readonly primaryByMetric: Readonly<Record<string, number>>;
  readonly aaTests: number;
  /** Among the non-A/A experiments: primary effects from each part of the prior. */
  readonly trueNulls: number;
  readonly trueWins: number;
  readonly trueLosses: number;
  readonly sampleRatioMismatches: number;
  readonly peeked: number;
  readonly stoppedEarly: number;
  readonly decisions: Readonly<Record<"shipped" | "not_shipped" | "iterate" | "pending", number>>;
  readonly holdouts: number;
  readonly inputForms: Readonly<Record<string, number>>;
  readonly percentRows: number;
  /** Shipped primaries whose true effect is <= 0 (false wins), and < 0 (shipped losses). */
  readonly falseWins: number;
  readonly shippedLosses: number;
  /** Sum over shipped primaries of the observed lift y (claimed) and of the true effect. */
  readonly shippedClaimedLift: number;
  readonly shippedTrueLift: number;
  /** A/A primaries (decided or pending) whose lift is significant at two-sided alpha. */
  readonly aaSignificant: number;
}

function tally(values: readonly string[]): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const value of values) counts[value] = (counts[value] ?? 0) + 1;
  return counts;
}

/** @param criticalZ z_{1 - alpha/2} of the demo's decision rule */
export function countDemo(rows: readonly DemoResultTruth[], criticalZ: number): DemoCounts {
  const primaries = rows.filter((row) => row.isPrimary);
  const shipped = primaries.filter((row) => row.decision === "shipped");
  const decisions = { shipped: 0, not_shipped: 0, iterate: 0, pending: 0 };
  for (const row of primaries) decisions[row.decision] += 1;
  return {
    experiments: primaries.length,
    results: rows.length,
    secondaryResults: rows.length - primaries.length,
    teams: tally(primaries.map((row) => row.team)),
    primaryByMetric: tally(primaries.map((row) => row.metric)),
    aaTests: primaries.filter((row) => row.isAa).length,
    trueNulls: primaries.filter((row) => row.effectClass === "null").length,
    trueWins: primaries.filter((row) => row.effectClass === "win").length,
    trueLosses: primaries.filter((row) => row.effectClass === "loss").length,
    sampleRatioMismatches: primaries.filter((row) => row.srmFlagged).length,
    peeked: primaries.filter((row) => row.peeked).length,
    stoppedEarly: primaries.filter((row) => row.stoppedEarly).length,
    decisions,
    holdouts: primaries.filter((row) => row.holdout !== null).length,
    inputForms: tally(rows.map((row) => row.inputForm)),
    percentRows: rows.filter((row) => row.percent).length,
    falseWins: shipped.filter((row) => row.trueEffect <= 0).length,
    shippedLosses: shipped.filter((row) => row.trueEffect < 0).length,
    shippedClaimedLift: shipped.reduce((sum, row) => sum + row.observedLift, 0),
    shippedTrueLift: shipped.reduce((sum, row) => sum + row.trueEffect, 0),
    aaSignificant: primaries.filter(
      (row) => row.isAa && Math.abs(row.observedLift / row.observedSe) > criticalZ,
    ).length,
  };
}
