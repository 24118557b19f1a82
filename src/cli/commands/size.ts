/**
 * `plumbline size`: sample size, power or minimum detectable effect of a test plan
 * (statistics.md section 4).
 * - conversion metric: --baseline RATE with --mde REL (relative lift) or --mde-absolute ABS;
 * - continuous metric: --sd SD with --delta ABS, or --mean M with --mde REL;
 * - with --power (default 0.8): {nPerArm, totalN, days?}; with --n instead: {power};
 *   with --n and --power but no effect: the minimum detectable effect.
 */
import { calculatorCautions, sizeAssumptions } from "../../stats/calculator-notes.ts";
import {
  type SizeAnswer,
  type SizeRequest,
  sizeCalculator,
  sizeDocument,
} from "../../stats/size-calculator.ts";
import {
  type CalculatorCommand,
  FlagError,
  notesBlock,
  percent,
  runCalculatorCommand,
} from "../calculator-flags.ts";
import type { CommandIo } from "../io.ts";

export const summary = "sample size, run length, power or minimum detectable effect of a test plan";

const help = `Usage: plumbline size --baseline RATE --mde REL [options]       (conversion metric)
       plumbline size --sd SD --delta ABS [options]             (continuous metric)
       plumbline size ... --n N                                 (power of N units per arm)
       plumbline size --baseline RATE --n N --power B           (minimum detectable effect)

Metric:
  --baseline RATE           baseline conversion rate, in (0, 1)
  --mde REL                 relative minimum detectable effect (lift; 0.05 = +5 %)
  --mde-absolute ABS        absolute minimum detectable effect (rate points, or units of the mean)
  --sd SD                   per-unit standard deviation of a continuous metric
  --delta ABS               absolute difference in means to detect
  --mean M                  baseline mean of a continuous metric (for a relative --mde)
Design:
  --alpha A                 two-sided significance level (default 0.05)
  --power B                 target power (default 0.8)
  --n N                     units in the control arm: report the power instead
  --ratio R                 units in each treatment arm / units in the control arm (default 1)
  --arms K                  arms including the control (default 2)
  --correction C            bonferroni (default) or none, across the K - 1 comparisons
  --variance-reduction RHO  correlation of the metric with a pre-period covariate; variance x (1 - RHO^2)
  --daily-traffic T         eligible units per day: adds the run length in days
  --strict                  count rejections in both tails (R strict = TRUE)
  --json                    print one JSON document`;

const command: CalculatorCommand = {
  name: "size",
  help,
  options: {
    baseline: { type: "string" },
    mde: { type: "string" },
    "mde-absolute": { type: "string" },
    sd: { type: "string" },
    delta: { type: "string" },
    mean: { type: "string" },
    alpha: { type: "string" },
    power: { type: "string" },
    n: { type: "string" },
    ratio: { type: "string" },
    arms: { type: "string" },
    correction: { type: "string" },
    "variance-reduction": { type: "string" },
    "daily-traffic": { type: "string" },
    strict: { type: "boolean" },
    json: { type: "boolean" },
  },
  flagNames: {
    covariateCorrelation: "--variance-reduction",
    varianceReduction: "--variance-reduction",
    relativeEffect: "--mde",
    absoluteEffect: "--mde-absolute",
    mdeAbsolute: "--mde-absolute",
    "baseline + effect": "the treatment rate (--baseline plus the effect)",
  },
};

export async function run(args: string[], io: CommandIo): Promise<number> {
  return runCalculatorCommand(command, args, io, (flags) => {
    if (flags.has("baseline") === flags.has("sd")) {
      throw new FlagError(
        "give --baseline RATE (conversion metric) or --sd SD (continuous metric), one of them",
      );
    }
    if (!flags.has("mde") && !flags.has("mde-absolute") && !flags.has("delta") && !flags.has("n")) {
      throw new FlagError(
        "give the effect to detect (--mde, --mde-absolute or --delta), or --n for the minimum detectable effect",
      );
    }
    const request: SizeRequest = {
      ...flags.optionalNumber("baseline", "baseline"),
      ...flags.optionalNumber("mde", "mde"),
      ...flags.optionalNumber("mdeAbsolute", "mde-absolute"),
      ...flags.optionalNumber("sd", "sd"),
      ...flags.optionalNumber("delta", "delta"),
      ...flags.optionalNumber("mean", "mean"),
      ...flags.optionalNumber("alpha", "alpha"),
      ...flags.optionalNumber("power", "power"),
      ...flags.optionalNumber("n", "n"),
      ...flags.optionalNumber("ratio", "ratio"),
      ...flags.optionalNumber("arms", "arms"),
      ...flags.optionalNumber("varianceReduction", "variance-reduction"),
      ...flags.optionalNumber("dailyTraffic", "daily-traffic"),
      ...optionalChoice("correction", flags.choice("correction", ["bonferroni", "none"] as const)),
      convention: flags.has("strict") ? "strict" : "upperTail",
    };
    const answer = sizeCalculator(request);
    const assumptions = sizeAssumptions(answer.plan);
    if (flags.has("json")) {
      io.out(JSON.stringify({ ...sizeDocument(answer), assumptions, cautions: calculatorCautions }));
      return;
    }
    io.out([...sizeText(answer), ...notesBlock(assumptions, calculatorCautions)].join("\n"));
  });
}

function optionalChoice<Key extends string, Value>(
  key: Key,
  value: Value | undefined,
): { [K in Key]?: Value } {
  return (value === undefined ? {} : { [key]: value }) as { [K in Key]?: Value };
}

function sizeText(answer: SizeAnswer): string[] {
  if (answer.mode === "minimumDetectableEffect") {
    const plan = answer.plan;
    return [
      `Minimum detectable effect with ${plan.nPerArm} units in the control arm at power ${plan.power}:`,
      `  absolute ${Number(plan.absoluteEffect.toPrecision(4))}${plan.relativeEffect === undefined ? "" : `, relative ${percent(plan.relativeEffect)}`}`,
      `  (${plan.method}, alpha ${plan.alphaPerComparison} per comparison)`,
    ];
  }
  if (answer.mode === "power") {
    const plan = answer.plan;
    return [
      `Power with ${plan.nPerArm} units in the control arm: ${percent(plan.power)}`,
      `  (${plan.totalN} units in total${plan.days === undefined ? "" : `, ${plan.days} days`})`,
      `  for ${describeEffect(plan)} (${plan.method})`,
    ];
  }
  const plan = answer.plan;
  return [
    `Units per arm: ${plan.nPerArm} in the control${plan.ratio === 1 ? " and in each treatment arm" : `, ${plan.nTreatmentPerArm} in each treatment arm`} (exact ${plan.exactNPerArm.toFixed(2)})`,
    `Total units:   ${plan.totalN} over ${plan.arms} arms`,
    ...(plan.days === undefined ? [] : [`Run length:    ${plan.days} days`]),
    `Sized for ${describeEffect(plan)} at power ${plan.power}, alpha ${plan.alpha} (${plan.method})`,
  ];
}

function describeEffect(plan: {
  absoluteEffect: number;
  relativeEffect: number | undefined;
  metricKind: string;
}): string {
  const absolute = `an absolute difference of ${Number(plan.absoluteEffect.toPrecision(6))}`;
  return plan.relativeEffect === undefined
    ? absolute
    : `${absolute} (relative ${percent(plan.relativeEffect)})`;
}
