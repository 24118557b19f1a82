/**
 * `plumbline design --effect D --se S [--alpha A] [--df DF] [--json]`: power, Type S and the
 * exaggeration ratio of one test (Gelman & Carlin 2014; closed form, Lu, Qiu & Deng 2018).
 * The inverse questions: `--power B [--se S]` gives the true effect with that power (in units of
 * the SE, and absolute when --se is given) and the Type S and exaggeration to expect at it.
 */
import { calculatorCautions, designAssumptions } from "../../stats/calculator-notes.ts";
import { defaultAlpha, designAnalysis, designAtPower } from "../../stats/design-analysis.ts";
import { type DesignOperatingCurve, designOperatingCurve } from "../../stats/operating-curve.ts";
import {
  type CalculatorCommand,
  FlagError,
  type Flags,
  notesBlock,
  percent,
  runCalculatorCommand,
} from "../calculator-flags.ts";
import type { CommandIo } from "../io.ts";

export const summary =
  "power, Type S, exaggeration and operating curve of one test; or the effect and exaggeration at a given power";

const help = `Usage: plumbline design --effect D --se S [--alpha A] [--df DF] [--json]
       plumbline design --power B [--se S] [--alpha A] [--df DF] [--json]

  --effect D   the true effect assumed (same units as the SE, e.g. relative lift 0.01;
               a negative one as --effect=-0.01)
  --se S       standard error of the estimate
  --power B    instead of --effect: the effect with this power, and what to expect at it
  --alpha A    two-sided significance level (default 0.05)
  --df DF      Student t reference with DF degrees of freedom (> 1; default: normal)
  --json       print one JSON document (with the operating curve: share of null tests
               shipped against share of real wins shipped as the threshold moves)`;

const round = (value: number, digits = 4) => Number(value.toPrecision(digits));

const command: CalculatorCommand = {
  name: "design",
  help,
  options: {
    effect: { type: "string" },
    se: { type: "string" },
    power: { type: "string" },
    alpha: { type: "string" },
    df: { type: "string" },
    json: { type: "boolean" },
  },
  flagNames: { standardError: "--se" },
};

function curveLines(curve: DesignOperatingCurve): string[] {
  return [
    "",
    "Operating curve (ship a win when y / s exceeds the threshold):",
    "  alpha   threshold   nulls shipped   real wins shipped",
    ...curve.atConventionalAlphas.map(
      (point) =>
        `  ${String(point.alpha).padEnd(6)}  ${point.threshold.toFixed(3).padStart(9)}   ${percent(point.nullShipped).padStart(13)}   ${percent(point.winsShipped).padStart(17)}`,
    ),
    `  area under the curve: ${curve.area.toFixed(4)}`,
  ];
}

export async function run(args: string[], io: CommandIo): Promise<number> {
  return runCalculatorCommand(command, args, io, (flags) => design(flags, io));
}

function design(flags: Flags, io: CommandIo): void {
  const alpha = flags.numberOr("alpha", defaultAlpha);
  const df = flags.number("df");
  const dfOption = df === undefined ? {} : { df };
  const assumptions = designAssumptions({ alpha, df });
  const reference = df === undefined ? "normal" : `Student t, ${df} df`;
  const effect = flags.number("effect");
  const targetPower = flags.number("power");
  if (effect !== undefined && targetPower !== undefined)
    throw new FlagError("give --effect or --power, not both");
  if (effect === undefined && targetPower === undefined)
    throw new FlagError("--effect (with --se) or --power is required");

  if (effect !== undefined) {
    const standardError = flags.requiredNumber("se");
    const result = designAnalysis({ effect, standardError, alpha, ...dfOption });
    const curve = designOperatingCurve(Math.abs(effect) / standardError, df);
    if (flags.has("json")) {
      io.out(
        JSON.stringify({
          ...result,
          operatingCurve: curve,
          inputs: { effect, standardError, alpha, df: df ?? null },
          assumptions,
          cautions: calculatorCautions,
        }),
      );
      return;
    }
    io.out(
      [
        `Design: true effect ${effect}, standard error ${standardError} (${round(Math.abs(effect) / standardError)} SE), alpha ${alpha} two-sided, ${reference} reference`,
        "",
        `Power:                       ${percent(result.power)}`,
        `Type S (wrong sign | signif.): ${percent(result.typeS)}`,
        `Exaggeration ratio:          ${round(result.exaggeration)}x (significant estimates overstate |effect| by this factor on average)`,
        ...curveLines(curve),
        ...notesBlock(assumptions, calculatorCautions),
      ].join("\n"),
    );
    return;
  }
  const power = targetPower as number;
  const standardError = flags.number("se");
  if (standardError !== undefined && !(standardError > 0)) {
    throw new FlagError(`--se must be a positive number; got ${standardError}`);
  }
  const result = designAtPower({ power, alpha, ...dfOption });
  const effectAtPower = standardError === undefined ? null : result.standardizedEffect * standardError;
  const curve = designOperatingCurve(result.standardizedEffect, df);
  if (flags.has("json")) {
    io.out(
      JSON.stringify({
        ...result,
        effect: effectAtPower,
        operatingCurve: curve,
        inputs: { power, standardError: standardError ?? null, alpha, df: df ?? null },
        assumptions,
        cautions: calculatorCautions,
      }),
    );
    return;
  }
  io.out(
    [
      `Design at power ${power}, alpha ${alpha} two-sided, ${reference} reference`,
      "",
      `True effect with this power: ${round(result.standardizedEffect)} standard errors${effectAtPower === null ? "" : ` = ${round(effectAtPower)}`}`,
      `Type S at that effect:        ${percent(result.typeS)}`,
      `Exaggeration to expect:       ${round(result.exaggeration)}x`,
      ...curveLines(curve),
      ...notesBlock(assumptions, calculatorCautions),
    ].join("\n"),
  );
}
