/**
 * How a demo team writes one result into the canonical CSV, and the (y, s) that statistics.md
 * section 1 derives back from exactly what was written. The demo's decisions use these derived
 * values (a team decides on what its report shows), so every decision in the demo agrees with the
 * lift and SE the importer stores, to rounding.
 *
 * Number formats: lifts and SEs as fractions with 7 decimals, or with a % sign and 5 decimals;
 * a confidence interval is written in whole units of 1e-7 around the written lift, so it is exactly
 * symmetric in decimal; p-values with 6 significant digits; means and sds with 4 decimals.
 */
import { normalQuantile, normalSurvival } from "../stats/distributions.ts";
import { type LiftEstimate, liftFromCounts } from "../stats/lift-from-counts.ts";
import { liftFromInterval } from "../stats/lift-from-interval.ts";
import { liftFromMeans } from "../stats/lift-from-means.ts";
import { liftFromPValue } from "../stats/lift-from-p-value.ts";

/** The input forms of statistics.md section 1, named as results.input_form stores them. */
export type DemoInputForm = "counts" | "means" | "interval" | "p_value" | "standard_error";

/** How a team reports: raw arm data (counts or means, by metric kind) or one summary form. */
export type ReportStyle = "raw" | "interval" | "p_value" | "standard_error";

/** The arm data of one metric at the moment of analysis. */
export type ArmData =
  | {
      readonly kind: "binary";
      readonly controlN: number;
      readonly treatmentN: number;
      readonly controlConversions: number;
      readonly treatmentConversions: number;
    }
  | {
      readonly kind: "continuous";
      readonly controlN: number;
      readonly treatmentN: number;
      readonly controlMean: number;
      readonly controlSd: number;
      readonly treatmentMean: number;
      readonly treatmentSd: number;
    };

export interface ReportFormat {
  readonly style: ReportStyle;
  /** Lifts, SEs and interval ends written with a % sign. */
  readonly percent: boolean;
  /** Confidence level of an interval (style `interval`). */
  readonly level: number;
}

/** The statistic cells of one CSV row (the canonical column names) and what they derive to. */
export interface ReportedResult {
  readonly cells: Readonly<Record<string, string>>;
  readonly form: DemoInputForm;
  readonly percent: boolean;
  /** (y, s) as statistics.md section 1 derives them from the written cells. */
  readonly lift: number;
  readonly standardError: number;
}

/** Fractions are written in whole units of 1e-7 (5 decimals when written as percent). */
const unitsPerFraction = 1e7;
/** Below this two-sided p-value tools print "p < 0.00001"; such rows give their SE instead. */
const smallestWrittenPValue = 1e-5;
/** Above this the p-value pins the SE down poorly; such rows give their SE instead. */
const largestWrittenPValue = 0.9995;

function formatUnits(units: number, percent: boolean): string {
  return percent ? `${(units / 1e5).toFixed(5)}%` : (units / unitsPerFraction).toFixed(7);
}

/** Reads a cell the way the canonical layout defines it: a trailing % sign means percent. */
export function readWrittenNumber(text: string): number {
  return text.endsWith("%") ? Number(text.slice(0, -1)) / 100 : Number(text);
}

function rawEstimate(data: ArmData): LiftEstimate {
  return data.kind === "binary" ? liftFromCounts(data) : liftFromMeans(data);
}

/**
 * Writes one result in the given format and derives (y, s) back from the written text.
 * A p-value row whose p would print outside [1e-5, 0.9995], or whose lift prints as 0, is
 * written with its SE instead (the p-value form cannot carry it).
 */
export function reportResult(data: ArmData, format: ReportFormat): ReportedResult {
  const sizeCells = { control_n: String(data.controlN), treatment_n: String(data.treatmentN) };
  if (format.style === "raw") {
    if (data.kind === "binary") {
      const estimate = liftFromCounts(data);
      return {
        cells: {
          ...sizeCells,
          control_conversions: String(data.controlConversions),
          treatment_conversions: String(data.treatmentConversions),
        },
        form: "counts",
        percent: false,
        lift: estimate.lift,
        standardError: estimate.standardError,
      };
    }
    const cells = {
      ...sizeCells,
      control_mean: data.controlMean.toFixed(4),
      control_sd: data.controlSd.toFixed(4),
      treatment_mean: data.treatmentMean.toFixed(4),
      treatment_sd: data.treatmentSd.toFixed(4),
    };
    const estimate = liftFromMeans({
      controlN: data.controlN,
      treatmentN: data.treatmentN,
      controlMean: Number(cells.control_mean),
      controlSd: Number(cells.control_sd),
      treatmentMean: Number(cells.treatment_mean),
      treatmentSd: Number(cells.treatment_sd),
    });
    return {
      cells,
      form: "means",
      percent: false,
      lift: estimate.lift,
      standardError: estimate.standardError,
    };
  }
  const estimate = rawEstimate(data);
  const percent = format.percent;
  const liftUnits = Math.round(estimate.lift * unitsPerFraction);
  const liftText = formatUnits(liftUnits, percent);
  const writtenLift = readWrittenNumber(liftText);
  if (format.style === "interval") {
    const z = normalQuantile((1 + format.level) / 2);
    const halfWidthUnits = Math.max(1, Math.round(z * estimate.standardError * unitsPerFraction));
    const levelText = percent ? `${Math.round(format.level * 100)}%` : String(format.level);
    const cells = {
      ...sizeCells,
      lift: liftText,
      lift_ci_low: formatUnits(liftUnits - halfWidthUnits, percent),
      lift_ci_high: formatUnits(liftUnits + halfWidthUnits, percent),
      ci_level: levelText,
    };
    const derived = liftFromInterval({
      lift: writtenLift,
      low: readWrittenNumber(cells.lift_ci_low),
      high: readWrittenNumber(cells.lift_ci_high),
      level: readWrittenNumber(levelText),
    });
    return { cells, form: "interval", percent, lift: derived.lift, standardError: derived.standardError };
  }
  if (format.style === "p_value" && writtenLift !== 0) {
    const pValue = 2 * normalSurvival(Math.abs(writtenLift) / estimate.standardError);
    const pText = pValue.toPrecision(6);
    const writtenP = Number(pText);
    if (writtenP >= smallestWrittenPValue && writtenP <= largestWrittenPValue) {
      const derived = liftFromPValue({ lift: writtenLift, pValue: writtenP });
      return {
        cells: { ...sizeCells, lift: liftText, p_value: pText },
        form: "p_value",
        percent,
        lift: derived.lift,
        standardError: derived.standardError,
      };
    }
  }
  const seUnits = Math.max(1, Math.round(estimate.standardError * unitsPerFraction));
  const seText = formatUnits(seUnits, percent);
  return {
    cells: { ...sizeCells, lift: liftText, lift_se: seText },
    form: "standard_error",
    percent,
    lift: writtenLift,
    standardError: readWrittenNumber(seText),
  };
}
