/**
 * The fields of a planned test of the backlog and the checks every way in (CSV import, API, CLI)
 * applies to them: a key and a name, a metric, a way to get the planned standard error
 * (statistics.md section 7: a stated SE, or n per arm / traffic x days with a baseline rate or a
 * baseline mean and sd), an optional assumed-prior override, and a status (a done test links to
 * its experiment). Each problem names the field, so callers can report it by column or path.
 */
import { assumedPrior } from "../stats/assumed-prior.ts";
import { StatsInputError } from "../stats/errors.ts";
import { plannedStandardError } from "../stats/forecast-standard-error.ts";

export const plannedTestStatuses = ["planned", "running", "done"] as const;
export type PlannedTestStatus = (typeof plannedTestStatuses)[number];

export interface PriorOverride {
  readonly winRate: number;
  readonly lossRate?: number;
  readonly effectScale: number;
  readonly shape?: "normal" | "fat";
}

export interface PlannedTestFields {
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  /** The metric's key in the workspace. */
  readonly metric: string;
  readonly plannedStart: string | null;
  readonly dailyTraffic: number | null;
  readonly nPerArm: number | null;
  readonly runDays: number | null;
  readonly arms: number;
  readonly baselineRate: number | null;
  readonly baselineMean: number | null;
  readonly baselineSd: number | null;
  readonly standardError: number | null;
  readonly priorOverride: PriorOverride | null;
  readonly status: PlannedTestStatus;
  /** The experiment's key, for a test that is running or done. */
  readonly experiment: string | null;
}

export type PlannedTestField = keyof PlannedTestFields;

export interface FieldProblem {
  readonly field: PlannedTestField;
  readonly message: string;
}

const maximumKeyLength = 200;

/** Checks the fields together; an empty list means the planned test can be stored and forecast. */
export function checkPlannedTest(fields: PlannedTestFields): FieldProblem[] {
  const problems: FieldProblem[] = [];
  if (fields.key.trim() === "") problems.push({ field: "key", message: "must not be empty" });
  if (fields.key.length > maximumKeyLength)
    problems.push({ field: "key", message: `must be at most ${maximumKeyLength} characters` });
  if (fields.name.trim() === "") problems.push({ field: "name", message: "must not be empty" });
  if (fields.metric.trim() === "") problems.push({ field: "metric", message: "must name a metric key" });
  if (!Number.isInteger(fields.arms) || fields.arms < 2)
    problems.push({
      field: "arms",
      message: `must be a whole number of at least 2 (control included); got ${fields.arms}`,
    });
  for (const field of ["dailyTraffic", "nPerArm", "runDays", "baselineSd", "standardError"] as const) {
    const value = fields[field];
    if (value !== null && !(Number.isFinite(value) && value > 0))
      problems.push({ field, message: `must be a positive number; got ${value}` });
  }
  if (fields.nPerArm !== null && !Number.isInteger(fields.nPerArm))
    problems.push({ field: "nPerArm", message: `must be a whole number of users; got ${fields.nPerArm}` });
  if (fields.baselineRate !== null && !(fields.baselineRate > 0 && fields.baselineRate < 1))
    problems.push({
      field: "baselineRate",
      message: `must be strictly between 0 and 1; got ${fields.baselineRate}`,
    });
  if (fields.baselineMean !== null && !(Number.isFinite(fields.baselineMean) && fields.baselineMean !== 0))
    problems.push({
      field: "baselineMean",
      message: `must be a non-zero number; got ${fields.baselineMean}`,
    });
  if (fields.status === "done" && fields.experiment === null)
    problems.push({ field: "experiment", message: "a done test must name the experiment it became" });
  if (problems.length > 0) return problems;

  try {
    plannedStandardError(fields);
  } catch (error) {
    if (!(error instanceof StatsInputError)) throw error;
    problems.push({ field: standardErrorField(fields), message: standardErrorMessage(fields) });
  }
  if (fields.priorOverride !== null) {
    try {
      assumedPrior(fields.priorOverride);
    } catch (error) {
      if (!(error instanceof StatsInputError)) throw error;
      problems.push({ field: "priorOverride", message: error.message });
    }
  }
  return problems;
}

/** The planned SE, or null when the fields cannot give one (checkPlannedTest says why). */
export function plannedTestStandardError(fields: PlannedTestFields): number | null {
  try {
    return plannedStandardError(fields).standardError;
  } catch (error) {
    if (error instanceof StatsInputError) return null;
    throw error;
  }
}

function standardErrorField(fields: PlannedTestFields): PlannedTestField {
  const hasSize = fields.nPerArm !== null || (fields.dailyTraffic !== null && fields.runDays !== null);
  if (!hasSize && (fields.baselineRate !== null || fields.baselineMean !== null)) return "nPerArm";
  if (fields.baselineMean !== null && fields.baselineSd === null) return "baselineSd";
  if (fields.baselineSd !== null && fields.baselineMean === null) return "baselineMean";
  return "standardError";
}

function standardErrorMessage(fields: PlannedTestFields): string {
  const hasSize = fields.nPerArm !== null || (fields.dailyTraffic !== null && fields.runDays !== null);
  if (!hasSize && (fields.baselineRate !== null || fields.baselineMean !== null))
    return "the planned size is missing: give n_per_arm, or daily_traffic and run_days";
  if ((fields.baselineMean === null) !== (fields.baselineSd === null))
    return "a baseline mean needs its per-user sd (baseline_mean and baseline_sd together)";
  return "the planned standard error cannot be worked out: give standard_error, or a planned size (n_per_arm, or daily_traffic and run_days) with baseline_rate or baseline_mean and baseline_sd";
}
