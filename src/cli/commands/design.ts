/**
 * `plumbline design --effect D --se S [--alpha A] [--df DF] [--json]`: power, Type S and the
 * exaggeration ratio of one test (Gelman & Carlin 2014; closed form, Lu, Qiu & Deng 2018).
 * The inverse questions: `--power B [--se S]` gives the true effect with that power (in units of
 * the SE, and absolute when --se is given) and the Type S and exaggeration to expect at it.
 */
import { parseArgs } from "node:util";
import { calculatorCautions, designAssumptions } from "../../stats/calculator-notes.ts";
import { defaultAlpha, designAnalysis, designAtPower } from "../../stats/design-analysis.ts";
import {
  FlagError,
  notesBlock,
  numberFlag,
  percent,
  requiredNumberFlag,
  runCalculator,
} from "../calculator-flags.ts";
import type { CommandIo } from "../io.ts";

export const summary =
  "power, Type S and exaggeration of one test; or the effect and exaggeration at a given power";

const help = `Usage: plumbline design --effect D --se S [--alpha A] [--df DF] [--json]
       plumbline design --power B [--se S] [--alpha A] [--df DF] [--json]

  --effect D   the true effect assumed (same units as the SE, e.g. relative lift 0.01;
               a negative one as --effect=-0.01)
  --se S       standard error of the estimate
  --power B    instead of --effect: the effect with this power, and what to expect at it
  --alpha A    two-sided significance level (default 0.05)
  --df DF      Student t reference with DF degrees of freedom (> 1; default: normal)
  --json       print one JSON document`;

const round = (value: number, digits = 4) => Number(value.toPrecision(digits));

export async function run(args: string[], io: CommandIo): Promise<number> {
  return runCalculator("design", help, io, () => {
    let values: Record<string, string | boolean | undefined>;
    try {
      ({ values } = parseArgs({
        args,
        strict: true,
        allowPositionals: false,
        options: {
          effect: { type: "string" },
          se: { type: "string" },
          power: { type: "string" },
          alpha: { type: "string" },
          df: { type: "string" },
          json: { type: "boolean" },
          help: { type: "boolean", short: "h" },
        },
      }));
    } catch (error) {
      throw new FlagError((error as Error).message);
    }
    if (values.help) {
      io.out(help);
      return;
    }
    const text = (name: string) => values[name] as string | undefined;
    const alpha = numberFlag("alpha", text("alpha")) ?? defaultAlpha;
    const df = numberFlag("df", text("df"));
    const assumptions = designAssumptions({ alpha, df });
    const reference = df === undefined ? "normal" : `Student t, ${df} df`;
    const effect = numberFlag("effect", text("effect"));
    const targetPower = numberFlag("power", text("power"));
    if (effect !== undefined && targetPower !== undefined)
      throw new FlagError("give --effect or --power, not both");
    if (effect === undefined && targetPower === undefined)
      throw new FlagError("--effect (with --se) or --power is required");

    if (effect !== undefined) {
      const standardError = requiredNumberFlag("se", text("se"));
      const result = designAnalysis({ effect, standardError, alpha, ...(df === undefined ? {} : { df }) });
      if (values.json) {
        io.out(
          JSON.stringify({
            ...result,
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
          ...notesBlock(assumptions, calculatorCautions),
        ].join("\n"),
      );
      return;
    }
    const power = targetPower as number;
    const standardError = numberFlag("se", text("se"));
    if (standardError !== undefined && !(standardError > 0)) {
      throw new FlagError(`--se must be a positive number; got ${standardError}`);
    }
    const result = designAtPower({ power, alpha, ...(df === undefined ? {} : { df }) });
    const effectAtPower = standardError === undefined ? null : result.standardizedEffect * standardError;
    if (values.json) {
      io.out(
        JSON.stringify({
          ...result,
          effect: effectAtPower,
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
        ...notesBlock(assumptions, calculatorCautions),
      ].join("\n"),
    );
  });
}
