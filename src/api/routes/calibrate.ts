/**
 * Calibration of the company's defaults (statistics.md section 7): POST /calibrate recommends
 * alpha, n per arm and run length from a prior fitted to the workspace's history (or assumed);
 * POST /calibrate/test-and-roll plans a test on a finite population (Feit & Berman 2019);
 * POST /calibrate/skew-check simulates the Welch t-test on a skewed metric (section 9).
 * All three compute only; any role may call them.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { CalibrationSetupError, calibrateWorkspace } from "../../calibrate-workspace.ts";
import { createRandom } from "../../stats/random.ts";
import { simulateSkewedMetric } from "../../stats/skewed-metric-simulation.ts";
import { planTestAndRoll } from "../../stats/test-and-roll.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

const positive = () => z.number().positive().finite();

const PriorRequestSchema = z
  .discriminatedUnion("source", [
    z.object({
      source: z.literal("assumed"),
      winRate: z.number().min(0).max(1).openapi({ description: "P(real win)", example: 0.1 }),
      lossRate: z
        .number()
        .min(0)
        .max(1)
        .optional()
        .openapi({ description: "P(real loss); default the win rate" }),
      effectScale: positive().openapi({
        description: "Scale of a real win's or loss's size (relative lift)",
        example: 0.02,
      }),
      shape: z
        .enum(["normal", "fat"])
        .optional()
        .openapi({ description: "normal: half-normal sizes; fat: half-t, 3 df" }),
    }),
    z.object({
      source: z.literal("workspace"),
      family: z
        .string()
        .min(1)
        .openapi({ description: "Metric family whose primary results the prior is fitted to" }),
      fitFamily: z.enum(["symmetric", "skewed", "grid", "auto"]).optional(),
    }),
  ])
  .openapi("CalibrationPrior");

const MetricScaleSchema = z
  .discriminatedUnion("kind", [
    z.object({ kind: z.literal("rate"), baselineRate: z.number().gt(0).lt(1).openapi({ example: 0.05 }) }),
    z.object({ kind: z.literal("mean"), mean: z.number().finite(), sd: positive() }),
  ])
  .openapi("MetricScale");

const CalibrationRequestSchema = z
  .object({
    prior: PriorRequestSchema,
    metric: MetricScaleSchema,
    dailyTraffic: positive().openapi({ description: "Eligible users per day", example: 50000 }),
    periodDays: positive().openapi({ description: "Length of the period valued", example: 90 }),
    backlog: positive().openapi({ description: "Ideas available in the period", example: 40 }),
    valuePerLift: positive().openapi({
      description: "Value of a relative lift of 1 over the period",
      example: 2e7,
    }),
    launchCost: z
      .number()
      .min(0)
      .finite()
      .openapi({ description: "Fixed cost of one launch", example: 5000 }),
    lossPenalty: z
      .number()
      .min(0)
      .finite()
      .optional()
      .openapi({ description: "Extra penalty L of a shipped loss" }),
    arms: z
      .number()
      .int()
      .min(2)
      .max(20)
      .optional()
      .openapi({ description: "Arms per test, control included" }),
    mde: positive().optional().openapi({ description: "Relative effect the textbook design is powered for" }),
    maxDays: positive().optional().openapi({ description: "Longest run allowed (default: the period)" }),
  })
  .openapi("CalibrationRequest");

const DesignSchema = z
  .object({
    alpha: z.number(),
    threshold: z.number().openapi({ description: "One-sided z*: ship when y / s > z*" }),
    liftThreshold: z.number(),
    nPerArm: z.number(),
    standardError: z.number(),
    days: z.number(),
    testsPerPeriod: z.number(),
    power: z.number(),
    mde: z.number(),
    shipRate: z.number(),
    falsePositiveRisk: z.number(),
    exaggeration: z.number(),
    expectedShipped: z.number(),
    expectedRealWins: z.number(),
    expectedFalseWins: z.number(),
    expectedRealizedLift: z.number(),
    expectedClaimedLift: z.number(),
    valuePerTest: z.number(),
    expectedValue: z.number(),
    valueLeftOnTable: z.number(),
  })
  .openapi("CalibratedDesign");

const CalibrationReportSchema = z
  .object({
    recommended: DesignSchema,
    textbook: DesignSchema,
    current: DesignSchema.extend({ source: z.string() }).nullable(),
    optimum: z
      .object({})
      .passthrough()
      .openapi({ description: "Grid best, evaluations, the maximum check, the bounds" }),
    curves: z.object({
      valueVsAlpha: z.array(
        z.object({ alpha: z.number(), threshold: z.number(), expectedValue: z.number() }),
      ),
      valueVsN: z.array(
        z.object({
          nPerArm: z.number(),
          days: z.number(),
          testsPerPeriod: z.number(),
          expectedValue: z.number(),
        }),
      ),
      operatingCurves: z.array(z.object({}).passthrough()),
    }),
    sensitivity: z.object({
      scenarios: z.array(z.object({}).passthrough()),
      fragile: z.boolean(),
      fragileRule: z.string(),
    }),
    assumptions: z.array(z.string()),
    cautions: z.array(z.string()),
    prior: z.object({}).passthrough(),
  })
  .openapi("CalibrationReport");

const TestAndRollRequestSchema = z
  .object({
    population: positive().openapi({ example: 100000 }),
    priorMean: z.union([z.number().finite(), z.tuple([z.number().finite(), z.number().finite()])]).openapi({
      description: "Prior mean of an arm's mean response (one value, or one per arm)",
      example: 0.68,
    }),
    priorSd: z.union([positive(), z.tuple([positive(), positive()])]).openapi({ example: 0.03 }),
    responseSd: z.union([positive(), z.tuple([positive(), positive()])]).openapi({ example: 0.4665 }),
  })
  .openapi("TestAndRollRequest");

const TestAndRollPlanSchema = z
  .object({
    nPerArm: z.number().nullable(),
    nByArm: z.tuple([z.number(), z.number()]),
    nByArmExact: z.tuple([z.number(), z.number()]),
    method: z.enum(["closedForm", "numeric"]),
    expectedProfit: z.number(),
    perfectInformationProfit: z.number(),
    regret: z.number(),
    regretShare: z.number(),
    errorRate: z.number(),
    assumptions: z.array(z.string()),
    cautions: z.array(z.string()),
  })
  .openapi("TestAndRollPlan");

/** Upper bound on simulated users (runs x users per arm) for one request. */
export const maximumSkewCheckUsers = 10_000_000;

const SkewCheckRequestSchema = z
  .object({
    payerShare: z.number().gt(0).max(1).openapi({ example: 0.05 }),
    logMean: z.number().finite().openapi({ example: 3 }),
    logSd: positive().openapi({ example: 2 }),
    n: z.number().int().min(2).openapi({ description: "Users per arm", example: 1000 }),
    lift: z
      .number()
      .gt(-1)
      .finite()
      .optional()
      .openapi({ description: "Relative lift of the A/B runs (default 0.05)" }),
    alpha: z.number().gt(0).lt(1).optional(),
    sims: z
      .number()
      .int()
      .min(10)
      .max(100000)
      .optional()
      .openapi({ description: "Runs of each kind (default 2000)" }),
    seed: z.number().int().optional().openapi({ description: "Default 1" }),
  })
  .openapi("SkewCheckRequest");

const SkewCheckResultSchema = z
  .object({
    falsePositiveRate: z.number(),
    falsePositiveRateStandardError: z.number(),
    power: z.number(),
    powerStandardError: z.number(),
    nominalAlpha: z.number(),
    nominalPower: z.number(),
    offNominal: z.boolean(),
    lift: z.number(),
    nPerArm: z.number(),
    simulations: z.number(),
    seed: z.number(),
    metricMean: z.number(),
    metricSd: z.number(),
    metricSkewness: z.number(),
    assumptions: z.array(z.string()),
    cautions: z.array(z.string()),
  })
  .openapi("SkewCheckResult");

const pair = (value: number | readonly [number, number]): [number, number] =>
  typeof value === "number" ? [value, value] : [value[0], value[1]];

export function calibrateRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "post",
        path: "/calibrate",
        tags: ["calibrate"],
        summary:
          "Recommend alpha, n per arm and run length that maximise the expected value of a period of testing",
        request: {
          body: { content: { "application/json": { schema: CalibrationRequestSchema } }, required: true },
        },
        responses: {
          200: {
            description:
              "Recommended, textbook and current designs, curves, sensitivity, assumptions and cautions",
            content: { "application/json": { schema: CalibrationReportSchema } },
          },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      async (c) => {
        const body = c.req.valid("json");
        try {
          const report = await calibrateWorkspace(db, c.get("auth").workspaceId, body);
          return c.json(report as unknown as z.infer<typeof CalibrationReportSchema>, 200);
        } catch (error) {
          if (error instanceof CalibrationSetupError)
            throw new ApiError(422, "unprocessable", error.message, [
              { path: "prior", message: error.message },
            ]);
          throw error;
        }
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "post",
        path: "/calibrate/test-and-roll",
        tags: ["calibrate"],
        summary: "Profit-maximising test size on a finite population (Feit & Berman 2019)",
        request: {
          body: { content: { "application/json": { schema: TestAndRollRequestSchema } }, required: true },
        },
        responses: {
          200: {
            description: "The plan",
            content: { "application/json": { schema: TestAndRollPlanSchema } },
          },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      (c) => {
        const body = c.req.valid("json");
        const means = pair(body.priorMean);
        const sds = pair(body.priorSd);
        const responses = pair(body.responseSd);
        const plan = planTestAndRoll({
          population: body.population,
          arms: [
            { priorMean: means[0], priorSd: sds[0], responseSd: responses[0] },
            { priorMean: means[1], priorSd: sds[1], responseSd: responses[1] },
          ],
        });
        return c.json(
          {
            ...plan,
            nByArm: [...plan.nByArm] as [number, number],
            nByArmExact: [...plan.nByArmExact] as [number, number],
            assumptions: [...plan.assumptions],
            cautions: [...plan.cautions],
          },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "post",
        path: "/calibrate/skew-check",
        tags: ["calibrate"],
        summary:
          "Simulated false-positive rate and power of the Welch t-test on a zero-inflated log-normal metric",
        request: {
          body: { content: { "application/json": { schema: SkewCheckRequestSchema } }, required: true },
        },
        responses: {
          200: {
            description: "The simulation",
            content: { "application/json": { schema: SkewCheckResultSchema } },
          },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      (c) => {
        const body = c.req.valid("json");
        const simulations = body.sims ?? 2000;
        if (simulations * body.n > maximumSkewCheckUsers) {
          throw new ApiError(
            422,
            "unprocessable",
            `sims x n must be at most ${maximumSkewCheckUsers}; got ${simulations * body.n}`,
          );
        }
        const seed = body.seed ?? 1;
        const result = simulateSkewedMetric(
          {
            metric: {
              kind: "zeroInflatedLogNormal",
              payerShare: body.payerShare,
              logMean: body.logMean,
              logSd: body.logSd,
            },
            nPerArm: body.n,
            simulations,
            ...(body.lift === undefined ? {} : { lift: body.lift }),
            ...(body.alpha === undefined ? {} : { alpha: body.alpha }),
          },
          createRandom(seed),
        );
        return c.json(
          { ...result, seed, assumptions: [...result.assumptions], cautions: [...result.cautions] },
          200,
        );
      },
    );
}
