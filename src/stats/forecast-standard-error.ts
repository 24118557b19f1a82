/**
 * The planned standard error of a planned test's relative lift, by the conventions of
 * statistics.md section 7 (two arms compared; with k arms each arm against control):
 * - n is per arm; with eligible traffic t per day over D days, n = t D / arms;
 * - on a baseline rate p: s = sqrt(2 (1 - p) / (n p));
 * - on a baseline mean m with per-user sd: s = (sd / m) sqrt(2 / n);
 * - a stated standard error is used as given.
 * Example: n = 10000 per arm, p = 0.1 -> s = sqrt(2 * 0.9 / 1000) = 0.0424264...
 */
import { requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";

export interface PlannedDesign {
  /** The standard error of the relative lift, when stated directly. */
  readonly standardError?: number | null;
  /** Planned users per arm. */
  readonly nPerArm?: number | null;
  /** Eligible users per day, shared by all arms. */
  readonly dailyTraffic?: number | null;
  /** Planned run length in days. */
  readonly runDays?: number | null;
  /** Number of arms including control (default 2). */
  readonly arms?: number | null;
  readonly baselineRate?: number | null;
  readonly baselineMean?: number | null;
  readonly baselineSd?: number | null;
}

export interface PlannedStandardError {
  readonly standardError: number;
  /** Users per arm the SE was computed from (null when the SE was stated). */
  readonly nPerArm: number | null;
  /** How it was obtained, for the assumptions shown beside a forecast. */
  readonly basis: "stated" | "rate" | "mean";
}

const present = (value: number | null | undefined): value is number => value !== null && value !== undefined;

/** Users per arm: the planned n, or traffic x days / arms. Throws StatsInputError when neither is known. */
export function plannedSampleSizePerArm(design: PlannedDesign): number {
  if (present(design.nPerArm)) {
    requirePositive("nPerArm", design.nPerArm);
    return design.nPerArm;
  }
  if (present(design.dailyTraffic) && present(design.runDays)) {
    requirePositive("dailyTraffic", design.dailyTraffic);
    requirePositive("runDays", design.runDays);
    const arms = design.arms ?? 2;
    if (!Number.isInteger(arms) || arms < 2) throw new StatsInputError("arms", "an integer >= 2", arms);
    return (design.dailyTraffic * design.runDays) / arms;
  }
  throw new StatsInputError("nPerArm", "given, or dailyTraffic and runDays given", "neither");
}

/** The SE of the planned test's relative lift (statistics.md section 7 conventions). */
export function plannedStandardError(design: PlannedDesign): PlannedStandardError {
  if (present(design.standardError)) {
    requirePositive("standardError", design.standardError);
    return { standardError: design.standardError, nPerArm: null, basis: "stated" };
  }
  if (present(design.baselineRate)) {
    requireOpenUnit("baselineRate", design.baselineRate);
    const n = plannedSampleSizePerArm(design);
    const p = design.baselineRate;
    return { standardError: Math.sqrt((2 * (1 - p)) / (n * p)), nPerArm: n, basis: "rate" };
  }
  if (present(design.baselineMean) || present(design.baselineSd)) {
    if (!present(design.baselineMean) || !present(design.baselineSd)) {
      throw new StatsInputError("baselineMean and baselineSd", "given together", "only one");
    }
    requirePositive("baselineSd", design.baselineSd);
    if (!Number.isFinite(design.baselineMean) || design.baselineMean === 0) {
      throw new StatsInputError("baselineMean", "a finite non-zero number", design.baselineMean);
    }
    const n = plannedSampleSizePerArm(design);
    const standardError = (design.baselineSd / Math.abs(design.baselineMean)) * Math.sqrt(2 / n);
    return { standardError, nPerArm: n, basis: "mean" };
  }
  throw new StatsInputError("standardError", "given, or a baseline rate, or a baseline mean and sd", "none");
}
