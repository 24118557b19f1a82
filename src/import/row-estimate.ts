/**
 * Turns the estimate columns of one results row into (lift, SE) on the metric's raw scale, by
 * every input form of statistics.md section 1, and checks that a row giving several forms agrees
 * with itself. The direction flip for decrease metrics is applied by the caller, not here.
 *
 * Agreement, so that honest rounding passes and real contradictions do not: each form gives the
 * range of values its text allows (a value written "0.012" stands for 0.0115..0.0125, a p-value
 * "0.04" for 0.035..0.045); two forms agree when those ranges, each widened by
 * `agreementSlack` (relative), overlap. The slack covers a t instead of a z interval and the
 * first-order delta method (common practice; the choice is ours and documented in DEVELOPERS.md).
 */
import { StatsInputError } from "../stats/errors.ts";
import { liftFromCounts } from "../stats/lift-from-counts.ts";
import { liftFromInterval } from "../stats/lift-from-interval.ts";
import { liftFromMeans } from "../stats/lift-from-means.ts";
import { liftFromPValue } from "../stats/lift-from-p-value.ts";
import { defaultConfidenceLevel } from "./layouts.ts";
import type { RowReader } from "./row-reader.ts";

export type InputForm = "counts" | "means" | "standard_error" | "interval" | "p_value";

export interface RowEstimate {
  readonly form: InputForm;
  /** Relative lift as measured, treatment / control - 1 (not yet flipped). */
  readonly lift: number;
  readonly liftSe: number;
  readonly absoluteDifference: number | null;
  readonly notes: readonly { column: string; message: string }[];
}

/** Relative widening of each form's range before two forms are compared. */
export const agreementSlack = 0.05;

interface Range {
  readonly low: number;
  readonly high: number;
}

interface Candidate {
  readonly form: InputForm;
  /** The columns the form reads, for messages. */
  readonly label: string;
  /** The column an error about this form is reported under. */
  readonly column: string;
  readonly lift: number;
  readonly liftRange: Range;
  readonly standardError: number;
  readonly standardErrorRange: Range;
  readonly absoluteDifference: number | null;
}

const countColumns = ["control_n", "treatment_n", "control_conversions", "treatment_conversions"] as const;
const meanColumns = [
  "control_n",
  "treatment_n",
  "control_mean",
  "control_sd",
  "treatment_mean",
  "treatment_sd",
] as const;

const parameterColumns: Record<string, string> = {
  controlN: "control_n",
  treatmentN: "treatment_n",
  controlConversions: "control_conversions",
  treatmentConversions: "treatment_conversions",
  controlMean: "control_mean",
  controlSd: "control_sd",
  treatmentMean: "treatment_mean",
  treatmentSd: "treatment_sd",
  pValue: "p_value",
  level: "ci_level",
  low: "lift_ci_low",
  high: "lift_ci_high",
  lift: "lift",
};

const missingEstimateMessage =
  "missing estimate: give the counts (control_n, treatment_n, control_conversions, treatment_conversions), " +
  "the means (control_n, treatment_n, control_mean, control_sd, treatment_mean, treatment_sd), " +
  "or lift with one of lift_se, lift_ci_low + lift_ci_high, p_value";

/**
 * @returns the estimate, or undefined when the row has an error (already recorded on `reader`).
 */
export function estimateRow(
  reader: RowReader,
  metricKind: "binary" | "continuous" | undefined,
): RowEstimate | undefined {
  const errorsBefore = reader.errorCount;
  const notes: { column: string; message: string }[] = [];
  const candidates: Candidate[] = [];

  const givesCounts = reader.has("control_conversions") || reader.has("treatment_conversions");
  const givesMeans = ["control_mean", "control_sd", "treatment_mean", "treatment_sd"].some((column) =>
    reader.has(column),
  );
  if (givesCounts && metricKind === "continuous") {
    reader.fail(
      "control_conversions",
      'conversion counts are given but metric_kind is "continuous"; give means and sds for a continuous metric, or set metric_kind to binary',
    );
  } else if (givesCounts) {
    const candidate = countsCandidate(reader);
    if (candidate) candidates.push(candidate);
  }
  if (givesMeans) {
    const candidate = meansCandidate(reader);
    if (candidate) candidates.push(candidate);
  }

  const givenLift = reader.decimal("lift");
  // Without a lift column, the forms that need an estimate use the one the counts or means give.
  const derived = candidates[0];
  const lift =
    givenLift ?? (derived && !reader.has("lift") ? { value: derived.lift, halfUnit: 0 } : undefined);
  const givesLiftSe = reader.has("lift_se");
  const givesInterval = reader.has("lift_ci_low") || reader.has("lift_ci_high");
  const givesPValue = reader.has("p_value");
  if (!reader.has("lift") && !givesCounts && !givesMeans) {
    const column = givesLiftSe ? "lift_se" : givesInterval ? "lift_ci_low" : givesPValue ? "p_value" : "lift";
    reader.fail(
      "lift",
      givesLiftSe || givesInterval || givesPValue
        ? `missing estimate: ${column} is given without lift, the estimate it belongs to`
        : missingEstimateMessage,
    );
  }
  if (lift !== undefined) {
    if (givesLiftSe) {
      const se = reader.decimal("lift_se");
      if (se !== undefined) {
        if (!(se.value > 0)) reader.fail("lift_se", `must be above 0; got ${reader.text("lift_se")}`);
        else
          candidates.push({
            form: "standard_error",
            label: "lift_se",
            column: "lift_se",
            lift: lift.value,
            liftRange: around(lift.value, lift.halfUnit),
            standardError: se.value,
            standardErrorRange: { low: Math.max(se.value - se.halfUnit, 0), high: se.value + se.halfUnit },
            absoluteDifference: null,
          });
      }
    }
    if (givesInterval) {
      const candidate = intervalCandidate(reader, lift.value, lift.halfUnit, notes);
      if (candidate) candidates.push(candidate);
    }
    if (givesPValue) {
      const candidate = pValueCandidate(reader, lift.value, lift.halfUnit);
      if (candidate) candidates.push(candidate);
    }
    if (!givesLiftSe && !givesInterval && !givesPValue && !givesCounts && !givesMeans) {
      reader.fail("lift", "lift needs its uncertainty: give lift_se, lift_ci_low + lift_ci_high, or p_value");
    }
  }

  if (reader.errorCount > errorsBefore) return undefined;
  const [primary, ...others] = candidates;
  if (!primary) {
    // A cell that failed to parse already explains why no form could be read.
    if (reader.errorCount === 0) reader.fail("lift", missingEstimateMessage);
    return undefined;
  }
  let consistent = true;
  if (givenLift !== undefined && (primary.form === "counts" || primary.form === "means")) {
    const given = around(givenLift.value, givenLift.halfUnit);
    if (!overlaps(given, primary.liftRange, 1e-3)) {
      reader.fail(
        "lift",
        `${reader.text("lift")} disagrees with the lift ${formatNumber(primary.lift)} from the ${primary.form} (${primary.label}); a row that gives more than one form must agree with itself`,
      );
      consistent = false;
    }
  }
  for (const other of others) {
    if (other.form === "counts" || other.form === "means") {
      if (!overlaps(other.liftRange, primary.liftRange, agreementSlack)) {
        reader.fail(
          other.column,
          `the lift ${formatNumber(other.lift)} from the ${other.form} (${other.label}) disagrees with the lift ${formatNumber(primary.lift)} from the ${primary.form} (${primary.label})`,
        );
        consistent = false;
        continue;
      }
    }
    if (!overlaps(other.standardErrorRange, primary.standardErrorRange, agreementSlack)) {
      reader.fail(
        other.column,
        `${other.label} gives a standard error of ${formatNumber(other.standardError)}, which disagrees with ${formatNumber(primary.standardError)} from ${primary.label}; a row that gives more than one form must agree with itself`,
      );
      consistent = false;
    }
  }
  if (!consistent) return undefined;
  return {
    form: primary.form,
    lift: primary.lift,
    liftSe: primary.standardError,
    absoluteDifference: primary.absoluteDifference,
    notes,
  };
}

function countsCandidate(reader: RowReader): Candidate | undefined {
  const missing = countColumns.filter((column) => !reader.has(column));
  if (missing.length > 0) {
    reader.fail(missing[0] ?? null, `counts need ${countColumns.join(", ")}; missing ${missing.join(", ")}`);
    return undefined;
  }
  const [controlN, treatmentN, controlConversions, treatmentConversions] = countColumns.map((column) =>
    reader.count(column),
  );
  if (controlN === undefined || treatmentN === undefined) return undefined;
  if (controlConversions === undefined || treatmentConversions === undefined) return undefined;
  let bad = false;
  if (controlConversions > controlN) {
    reader.fail("control_conversions", conversionsMessage(controlConversions, "control_n", controlN));
    bad = true;
  }
  if (treatmentConversions > treatmentN) {
    reader.fail("treatment_conversions", conversionsMessage(treatmentConversions, "treatment_n", treatmentN));
    bad = true;
  }
  if (bad) return undefined;
  const estimate = convert(reader, "control_conversions", () =>
    liftFromCounts({ controlConversions, controlN, treatmentConversions, treatmentN }),
  );
  if (!estimate) return undefined;
  return {
    form: "counts",
    label: "control_conversions, treatment_conversions, control_n, treatment_n",
    column: "control_conversions",
    lift: estimate.lift,
    liftRange: point(estimate.lift),
    standardError: estimate.standardError,
    standardErrorRange: point(estimate.standardError),
    absoluteDifference: estimate.absoluteDifference,
  };
}

function conversionsMessage(conversions: number, nColumn: string, n: number): string {
  return `${conversions} conversions exceed ${nColumn} ${n}: an arm cannot convert more units than it has; check that the columns are not swapped and that the count is of converted units, not of events`;
}

function meansCandidate(reader: RowReader): Candidate | undefined {
  const missing = meanColumns.filter((column) => !reader.has(column));
  if (missing.length > 0) {
    reader.fail(missing[0] ?? null, `means need ${meanColumns.join(", ")}; missing ${missing.join(", ")}`);
    return undefined;
  }
  const controlN = reader.count("control_n");
  const treatmentN = reader.count("treatment_n");
  const controlMean = reader.decimal("control_mean");
  const controlSd = reader.decimal("control_sd");
  const treatmentMean = reader.decimal("treatment_mean");
  const treatmentSd = reader.decimal("treatment_sd");
  if (controlN === undefined || treatmentN === undefined) return undefined;
  if (!controlMean || !controlSd || !treatmentMean || !treatmentSd) return undefined;
  const estimate = convert(reader, "control_mean", () =>
    liftFromMeans({
      controlMean: controlMean.value,
      controlSd: controlSd.value,
      controlN,
      treatmentMean: treatmentMean.value,
      treatmentSd: treatmentSd.value,
      treatmentN,
    }),
  );
  if (!estimate) return undefined;
  // The lift the rounded means allow: the ratio at the corners of their rounding.
  const ratios: number[] = [];
  for (const treatment of [
    treatmentMean.value - treatmentMean.halfUnit,
    treatmentMean.value + treatmentMean.halfUnit,
  ]) {
    for (const control of [
      controlMean.value - controlMean.halfUnit,
      controlMean.value + controlMean.halfUnit,
    ]) {
      if (control !== 0) ratios.push(treatment / control - 1);
    }
  }
  const straddlesZero = controlMean.halfUnit >= Math.abs(controlMean.value);
  return {
    form: "means",
    label: "control_mean, control_sd, treatment_mean, treatment_sd",
    column: "control_mean",
    lift: estimate.lift,
    liftRange: straddlesZero
      ? { low: Number.NEGATIVE_INFINITY, high: Number.POSITIVE_INFINITY }
      : { low: Math.min(...ratios), high: Math.max(...ratios) },
    standardError: estimate.standardError,
    standardErrorRange: point(estimate.standardError),
    absoluteDifference: estimate.absoluteDifference,
  };
}

function intervalCandidate(
  reader: RowReader,
  lift: number,
  liftHalfUnit: number,
  notes: { column: string; message: string }[],
): Candidate | undefined {
  if (!reader.has("lift_ci_low") || !reader.has("lift_ci_high")) {
    const missing = reader.has("lift_ci_low") ? "lift_ci_high" : "lift_ci_low";
    reader.fail(missing, "an interval needs both lift_ci_low and lift_ci_high");
    return undefined;
  }
  const low = reader.decimal("lift_ci_low");
  const high = reader.decimal("lift_ci_high");
  const levelCell = reader.has("ci_level") ? reader.decimal("ci_level") : undefined;
  if (!low || !high || (reader.has("ci_level") && !levelCell)) return undefined;
  const level = levelCell?.value ?? defaultConfidenceLevel;
  if (!(level > 0 && level < 1)) {
    reader.fail("ci_level", `must be between 0 and 1 (e.g. 0.95 or 95%); got ${reader.text("ci_level")}`);
    return undefined;
  }
  if (!(high.value > low.value)) {
    reader.fail(
      "lift_ci_high",
      `must be above lift_ci_low ${reader.text("lift_ci_low")}; got ${reader.text("lift_ci_high")}`,
    );
    return undefined;
  }
  if (lift < low.value - liftHalfUnit || lift > high.value + liftHalfUnit) {
    reader.fail(
      "lift",
      `${reader.text("lift")} lies outside its interval lift_ci_low ${reader.text("lift_ci_low")} .. lift_ci_high ${reader.text("lift_ci_high")}`,
    );
    return undefined;
  }
  const clampedLift = Math.min(Math.max(lift, low.value), high.value);
  const estimate = convert(reader, "lift_ci_low", () =>
    liftFromInterval({ lift: clampedLift, low: low.value, high: high.value, level }),
  );
  if (!estimate) return undefined;
  if (!reader.has("ci_level")) {
    notes.push({
      column: "ci_level",
      message: "not given: the interval lift_ci_low .. lift_ci_high was read as 95%",
    });
  }
  if (estimate.scale === "log") {
    notes.push({
      column: "lift_ci_low",
      message:
        "the interval is asymmetric around lift, so its standard error was read on the log scale, log(1 + lift), where ratio intervals are symmetric",
    });
  }
  const width = high.value - low.value;
  const rounding = low.halfUnit + high.halfUnit;
  return {
    form: "interval",
    label: "lift_ci_low, lift_ci_high",
    column: "lift_ci_low",
    lift,
    liftRange: around(lift, liftHalfUnit),
    standardError: estimate.standardError,
    standardErrorRange: {
      low: (estimate.standardError * Math.max(width - rounding, 0)) / width,
      high: (estimate.standardError * (width + rounding)) / width,
    },
    absoluteDifference: null,
  };
}

function pValueCandidate(reader: RowReader, lift: number, liftHalfUnit: number): Candidate | undefined {
  const pValue = reader.decimal("p_value");
  if (!pValue) return undefined;
  if (!(pValue.value > 0 && pValue.value < 1)) {
    reader.fail(
      "p_value",
      `must be strictly between 0 and 1 (a p-value of 1 carries no information); got ${reader.text("p_value")}`,
    );
    return undefined;
  }
  if (lift === 0) {
    reader.fail(
      "lift",
      "is 0, so p_value says nothing about its standard error: give lift_se or an interval",
    );
    return undefined;
  }
  const estimate = convert(reader, "p_value", () => liftFromPValue({ lift, pValue: pValue.value }));
  if (!estimate) return undefined;
  const smallestLift = Math.max(Math.abs(lift) - liftHalfUnit, 0);
  const largestLift = Math.abs(lift) + liftHalfUnit;
  const smallestP = Math.max(pValue.value - pValue.halfUnit, Number.MIN_VALUE);
  const largestP = Math.min(pValue.value + pValue.halfUnit, 1);
  const inverseZ = (p: number) =>
    liftFromPValue({ lift: 1, pValue: Math.min(p, 1 - Number.EPSILON) }).standardError;
  return {
    form: "p_value",
    label: "p_value",
    column: "p_value",
    lift,
    liftRange: around(lift, liftHalfUnit),
    standardError: estimate.standardError,
    // s = |lift| / z(p) grows with |lift| and with p.
    standardErrorRange: { low: smallestLift * inverseZ(smallestP), high: largestLift * inverseZ(largestP) },
    absoluteDifference: null,
  };
}

function convert<Estimate>(
  reader: RowReader,
  fallbackColumn: string,
  conversion: () => Estimate,
): Estimate | undefined {
  try {
    return conversion();
  } catch (error) {
    if (!(error instanceof StatsInputError)) throw error;
    reader.fail(parameterColumns[error.parameter] ?? fallbackColumn, error.message);
    return undefined;
  }
}

function point(value: number): Range {
  return { low: value, high: value };
}

function around(value: number, halfUnit: number): Range {
  return { low: value - halfUnit, high: value + halfUnit };
}

/** Overlap of two ranges after widening each by `slack` times its largest magnitude. */
function overlaps(first: Range, second: Range, slack: number): boolean {
  const widen = (range: Range): Range => {
    const margin = slack * Math.max(Math.abs(range.low), Math.abs(range.high)) + 1e-12;
    return { low: range.low - margin, high: range.high + margin };
  };
  const a = widen(first);
  const b = widen(second);
  return a.low <= b.high && b.low <= a.high;
}

export function formatNumber(value: number): string {
  return Number(value.toPrecision(4)).toString();
}
