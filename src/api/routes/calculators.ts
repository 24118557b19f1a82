/**
 * The stateless design calculators over HTTP: POST /calculators/risk, /calculators/design and
 * /calculators/size. They read no workspace data, so any valid token may call them (read role).
 * Inputs are typed by zod (400 on a malformed body); the statistics validate ranges themselves
 * and refuse with 422 naming the parameter. Every answer carries its assumptions and cautions.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import {
  calculatorCautions,
  designAssumptions,
  riskAssumptions,
  sizeAssumptions,
} from "../../stats/calculator-notes.ts";
import { defaultAlpha, designAnalysis, designAtPower } from "../../stats/design-analysis.ts";
import { designErrorRates } from "../../stats/error-rates.ts";
import { StatsInputError } from "../../stats/errors.ts";
import { type DesignOperatingCurve, designOperatingCurve } from "../../stats/operating-curve.ts";
import { type SizeRequest, sizeCalculator, sizeDocument } from "../../stats/size-calculator.ts";
import { requiredRole } from "../auth.ts";
import { errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";

const probability = z.number().openapi({ example: 0.8 });
const notes = {
  assumptions: z
    .array(z.string())
    .openapi({ description: "What the figures assume; read before using them" }),
  cautions: z.array(z.string()).openapi({ description: "Limits of use" }),
};

const RiskRequestSchema = z
  .object({
    winRate: z
      .number()
      .openapi({ description: "Prior share of tested ideas that are real wins, in (0, 1)", example: 0.1 }),
    alpha: z.number().openapi({ description: "Two-sided significance level, in (0, 1)", example: 0.05 }),
    power: z.number().openapi({ description: "Power at the effect sizes that count", example: 0.8 }),
    tests: z
      .number()
      .optional()
      .openapi({ description: "Tests for the expected confusion matrix (default 1000)" }),
  })
  .openapi("RiskRequest");

const RiskResponseSchema = z
  .object({
    falsePositiveRisk: probability.openapi({
      description: "Share of significant wins that are not real (false-win rate alpha/2)",
    }),
    falseOmissionRisk: probability.openapi({ description: "Share of non-wins that were real wins" }),
    errorGivenRejection: probability.openapi({
      description: "Share of rejections (either side, full alpha) that are wrong",
    }),
    errorGivenNoRejection: probability.openapi({
      description: "Share of non-rejections that miss a real effect",
    }),
    confusion: z.object({
      tests: z.number(),
      realEffects: z.number(),
      nullEffects: z.number(),
      truePositives: z.number(),
      falsePositives: z.number(),
      falseNegatives: z.number(),
      trueNegatives: z.number(),
      falseDiscoveryRate: z.number(),
    }),
    ...notes,
  })
  .openapi("RiskAnswer");

const DesignRequestSchema = z
  .object({
    effect: z.number().optional().openapi({
      description: "True effect assumed (non-zero); omit to ask for the effect at `power`",
      example: 2,
    }),
    standardError: z
      .number()
      .optional()
      .openapi({ description: "Standard error of the estimate", example: 8.1 }),
    power: z
      .number()
      .optional()
      .openapi({ description: "Instead of effect: the target power (inverse question)" }),
    alpha: z.number().optional().openapi({ description: "Two-sided level (default 0.05)" }),
    df: z.number().optional().openapi({ description: "Student t reference with df > 1 (default: normal)" }),
  })
  .openapi("DesignRequest");

const OperatingPointSchema = z.object({
  threshold: z
    .number()
    .nullable()
    .openapi({ description: "One-sided threshold on y / s (null: infinite, at the ends)" }),
  alpha: probability.openapi({ description: "Two-sided level with the same upper threshold" }),
  nullShipped: probability.openapi({ description: "Share of null tests shipped" }),
  winsShipped: probability.openapi({ description: "Share of real wins of the given size shipped" }),
});

const OperatingCurveSchema = z
  .object({
    reference: z.enum(["normal", "studentT"]),
    points: z.array(OperatingPointSchema).openapi({ description: "41 points from (0, 0) to (1, 1)" }),
    area: z.number().openapi({ description: "Area under the curve: P(a win's estimate > a null's)" }),
    atConventionalAlphas: z.array(OperatingPointSchema),
  })
  .openapi("OperatingCurve", {
    description:
      "Share of null tests shipped against share of real wins shipped as the threshold moves (statistics.md section 2)",
  });

const DesignResponseSchema = z
  .object({
    mode: z
      .enum(["effect", "power"])
      .openapi({ description: "effect: analysis of a given effect; power: the inverse question" }),
    power: probability,
    typeS: probability.openapi({ description: "P(wrong sign | significant)" }),
    exaggeration: z.number().openapi({ description: "E(|estimate| / |effect| | significant)" }),
    criticalValue: z.number(),
    powerRightSign: probability,
    powerWrongSign: probability,
    reference: z.enum(["normal", "studentT"]),
    standardizedEffect: z.number().openapi({ description: "|effect| / standardError" }),
    effect: z
      .number()
      .nullable()
      .openapi({ description: "The effect (null in the inverse question without a standard error)" }),
    operatingCurve: OperatingCurveSchema,
    ...notes,
  })
  .openapi("DesignAnswer");

const SizeRequestSchema = z
  .object({
    baseline: z
      .number()
      .optional()
      .openapi({ description: "Conversion metric: baseline rate in (0, 1)", example: 0.05 }),
    mde: z
      .number()
      .optional()
      .openapi({ description: "Relative minimum detectable effect (lift)", example: 0.1 }),
    mdeAbsolute: z.number().optional().openapi({ description: "Absolute minimum detectable effect" }),
    sd: z.number().optional().openapi({ description: "Continuous metric: per-unit standard deviation" }),
    delta: z.number().optional().openapi({ description: "Continuous metric: absolute difference in means" }),
    mean: z
      .number()
      .optional()
      .openapi({ description: "Continuous metric: baseline mean, for a relative mde" }),
    alpha: z.number().optional().openapi({ description: "Two-sided level of the family (default 0.05)" }),
    power: z.number().optional().openapi({ description: "Target power (default 0.8)" }),
    n: z.number().optional().openapi({
      description: "Units in the control arm: answer the power (or, without an effect, the MDE)",
    }),
    ratio: z
      .number()
      .optional()
      .openapi({ description: "Treatment arm size / control arm size (default 1)" }),
    arms: z.number().int().optional().openapi({ description: "Arms including the control (default 2)" }),
    correction: z
      .enum(["bonferroni", "none"])
      .optional()
      .openapi({ description: "Across the arms - 1 comparisons (default bonferroni)" }),
    varianceReduction: z
      .number()
      .optional()
      .openapi({ description: "Correlation rho with a pre-period covariate; variance x (1 - rho^2)" }),
    dailyTraffic: z
      .number()
      .optional()
      .openapi({ description: "Eligible units per day, for the run length" }),
    convention: z
      .enum(["upperTail", "strict"])
      .optional()
      .openapi({ description: "strict: count both tails (R strict = TRUE)" }),
  })
  .openapi("SizeRequest");

const SizeResponseSchema = z
  .object({
    mode: z.enum(["sampleSize", "power", "minimumDetectableEffect"]),
    nPerArm: z.number().openapi({ description: "Units in the control arm (rounded up when solved for)" }),
    nTreatmentPerArm: z.number(),
    totalN: z.number().optional(),
    days: z.number().optional().openapi({ description: "Run length, when dailyTraffic is given" }),
    exactNPerArm: z.number().optional(),
    power: probability,
    minimumDetectableEffect: z.object({ absolute: z.number(), relative: z.number().nullable() }).optional(),
    metricKind: z.enum(["proportion", "mean"]),
    absoluteEffect: z.number(),
    relativeEffect: z.number().nullable(),
    treatmentRate: z.number().nullable(),
    alpha: z.number(),
    alphaPerComparison: z.number(),
    comparisons: z.number(),
    correction: z.enum(["bonferroni", "none"]),
    ratio: z.number(),
    arms: z.number(),
    varianceFactor: z.number(),
    convention: z.enum(["upperTail", "strict"]),
    method: z.string(),
    ...notes,
  })
  .openapi("SizeAnswer");

const calculatorErrors = errorResponses(400, 401, 422);

function jsonBody<T extends z.ZodType>(schema: T) {
  return { required: true, content: { "application/json": { schema } } } as const;
}

/** The curve as a JSON body (mutable arrays, as the response schema types them). */
function curveBody(curve: DesignOperatingCurve) {
  return { ...curve, points: [...curve.points], atConventionalAlphas: [...curve.atConventionalAlphas] };
}

/** Drops undefined values so that optional inputs stay absent (exactOptionalPropertyTypes-safe). */
function present<T extends object>(record: T): T {
  return Object.fromEntries(Object.entries(record).filter(([, value]) => value !== undefined)) as T;
}

export function calculatorsRoutes(_deps: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "post",
        path: "/calculators/risk",
        tags: ["calculators"],
        summary:
          "Error rates of a design: false positive risk, errors given (no) rejection, confusion matrix",
        description: "Kohavi, Deng & Vermeer (2022); Colquhoun (2014). Any valid token.",
        request: { body: jsonBody(RiskRequestSchema) },
        responses: {
          200: {
            description: "The error rates",
            content: { "application/json": { schema: RiskResponseSchema } },
          },
          ...calculatorErrors,
        },
      }),
      (c) => {
        const input = present(c.req.valid("json"));
        const rates = designErrorRates(input);
        return c.json(
          { ...rates, assumptions: [...riskAssumptions(input)], cautions: [...calculatorCautions] },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "post",
        path: "/calculators/design",
        tags: ["calculators"],
        summary:
          "Power, Type S and exaggeration of one test, or the effect and exaggeration at a given power",
        description: "Gelman & Carlin (2014); closed form of Lu, Qiu & Deng (2018). Any valid token.",
        request: { body: jsonBody(DesignRequestSchema) },
        responses: {
          200: {
            description: "The design analysis",
            content: { "application/json": { schema: DesignResponseSchema } },
          },
          ...calculatorErrors,
        },
      }),
      (c) => {
        const body = c.req.valid("json");
        const alpha = body.alpha ?? defaultAlpha;
        const assumptions = [...designAssumptions({ alpha, df: body.df })];
        const dfOption = body.df === undefined ? {} : { df: body.df };
        if (body.effect !== undefined && body.power !== undefined) {
          throw new StatsInputError("power", "absent when effect is given", body.power);
        }
        if (body.effect !== undefined) {
          if (body.standardError === undefined) {
            throw new StatsInputError("standardError", "given with effect", "nothing");
          }
          const result = designAnalysis({
            effect: body.effect,
            standardError: body.standardError,
            alpha,
            ...dfOption,
          });
          return c.json(
            {
              mode: "effect" as const,
              ...result,
              standardizedEffect: Math.abs(body.effect) / body.standardError,
              effect: body.effect,
              operatingCurve: curveBody(
                designOperatingCurve(Math.abs(body.effect) / body.standardError, body.df),
              ),
              assumptions,
              cautions: [...calculatorCautions],
            },
            200,
          );
        }
        if (body.power === undefined)
          throw new StatsInputError("effect", "given (or power, for the inverse question)", "nothing");
        if (body.standardError !== undefined && !(body.standardError > 0)) {
          throw new StatsInputError("standardError", "a positive finite number", body.standardError);
        }
        const result = designAtPower({ power: body.power, alpha, ...dfOption });
        return c.json(
          {
            mode: "power" as const,
            ...result,
            effect: body.standardError === undefined ? null : result.standardizedEffect * body.standardError,
            operatingCurve: curveBody(designOperatingCurve(result.standardizedEffect, body.df)),
            assumptions,
            cautions: [...calculatorCautions],
          },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "post",
        path: "/calculators/size",
        tags: ["calculators"],
        summary: "Sample size and run length, power of a given size, or minimum detectable effect",
        description:
          "An effect without n: units per arm at the target power; an effect with n: the power; n without an " +
          "effect: the minimum detectable effect. t-test exact with the noncentral t (R power.t.test); " +
          "proportions by R's power.prop.test formula. Any valid token.",
        request: { body: jsonBody(SizeRequestSchema) },
        responses: {
          200: { description: "The plan", content: { "application/json": { schema: SizeResponseSchema } } },
          ...calculatorErrors,
        },
      }),
      (c) => {
        const request = present(c.req.valid("json")) as SizeRequest;
        const answer = sizeCalculator(request);
        const document = sizeDocument(answer) as z.infer<typeof SizeResponseSchema>;
        return c.json(
          { ...document, assumptions: [...sizeAssumptions(answer.plan)], cautions: [...calculatorCautions] },
          200,
        );
      },
    );
}
