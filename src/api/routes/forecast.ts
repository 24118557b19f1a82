/**
 * The backlog forecast of the token's workspace (statistics.md section 8). The simulation runs
 * in steps that yield to the event loop (src/backlog/run-forecast-in-steps.ts), so the server
 * keeps answering other requests while a long forecast runs. `format: "html"` answers the
 * self-contained page instead of JSON.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { renderForecastHtml } from "../../backlog/forecast-html.ts";
import { forecastReport } from "../../backlog/forecast-report.ts";
import { parseRuleSpec, type RuleSpec } from "../../backlog/forecast-rules.ts";
import { runForecastInSteps } from "../../backlog/run-forecast-in-steps.ts";
import {
  defaultBootstrapReplicates,
  ForecastSetupError,
  prepareWorkspaceForecast,
  priorDrawModes,
} from "../../backlog/workspace-forecast.ts";
import { defaultForecastSimulations, storedFiguresPerQuarter } from "../../stats/forecast-backlog.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

/** Largest simulation the API runs in one request (portfolios x planned tests x rules), a few seconds. */
export const maximumForecastDraws = 50_000_000;

/** Most figures one API forecast keeps in memory (quarters x rules x groups x 5): 160 MB of doubles. */
export const maximumForecastFigures = 20_000_000;

const ForecastRequestSchema = z
  .object({
    rules: z
      .array(z.string())
      .min(1)
      .max(4)
      .default(["current"])
      .openapi({
        description: "current, recommended or alpha=A; the first is the headline",
        example: ["current", "alpha=0.1"],
      }),
    target: z
      .number()
      .nullable()
      .optional()
      .openapi({ description: "Target realized total lift, e.g. 0.05" }),
    sims: z.number().int().min(2).max(1_000_000).default(defaultForecastSimulations),
    seed: z.number().int().min(-2147483648).max(2147483647).default(1),
    fallbackPrior: z
      .object({
        winRate: z.number(),
        lossRate: z.number().optional(),
        effectScale: z.number(),
        shape: z.enum(["normal", "fat"]).optional(),
      })
      .nullable()
      .optional()
      .openapi({ description: "Assumed prior for families with too little history" }),
    economics: z
      .object({
        valuePerLift: z.number().positive(),
        launchCost: z.number().min(0),
        lossPenalty: z.number().min(0).optional(),
        periodDays: z.number().positive().optional(),
      })
      .nullable()
      .optional()
      .openapi({ description: "Needed by the recommended rule" }),
    priorDraws: z.enum(priorDrawModes).default("fixed").openapi({
      description:
        "fixed: fitted priors taken as known; bootstrap: each simulated quarter draws the family's prior from bootstrap refits of the fit",
    }),
    bootstrap: z
      .number()
      .int()
      .min(2)
      .max(1000)
      .default(defaultBootstrapReplicates)
      .openapi({ description: "Bootstrap refits per fitted family with priorDraws bootstrap" }),
    format: z.enum(["json", "html"]).default("json"),
  })
  .openapi("ForecastRequest");

const SummarySchema = z
  .object({
    mean: z.number(),
    standardDeviation: z.number(),
    monteCarloError: z.number(),
    quantiles: z.object({
      p5: z.number(),
      p25: z.number(),
      p50: z.number(),
      p75: z.number(),
      p95: z.number(),
    }),
    expected: z.number().nullable(),
  })
  .openapi("ForecastSummary");

const ForecastReportSchema = z
  .object({
    seed: z.number().int(),
    sims: z.number().int(),
    target: z.number().nullable(),
    rule: z.string(),
    shipped: SummarySchema,
    realWins: SummarySchema,
    falseWins: SummarySchema,
    claimedLift: SummarySchema,
    realizedLift: SummarySchema,
    liftGap: SummarySchema,
    probabilityToReachTarget: z.object({ estimate: z.number(), monteCarloError: z.number() }).nullable(),
    byTeam: z.array(z.object({ name: z.string(), tests: z.number().int() }).passthrough()),
    byFamily: z.array(z.object({ name: z.string(), tests: z.number().int() }).passthrough()),
    rules: z.array(z.object({ label: z.string() }).passthrough()),
    comparison: z.array(z.object({ label: z.string(), baseline: z.string() }).passthrough()),
    assumptions: z.array(z.string()),
    cautions: z.array(z.string()),
  })
  .passthrough()
  .openapi("ForecastReport");

export function forecastRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>().openapi(
    createRoute({
      ...requiredRole("read"),
      method: "post",
      path: "/forecast",
      tags: ["forecast"],
      summary: "Forecast what the planned and running tests will deliver",
      description:
        "Simulates `sims` quarters: each planned test's true effect from its family's prior (fitted to the history), " +
        "its estimate with the planned SE, shipped by each rule; rules are compared on the same draws.",
      request: {
        body: { required: false, content: { "application/json": { schema: ForecastRequestSchema } } },
      },
      responses: {
        200: {
          description: "The forecast (JSON, or the HTML page with format html)",
          content: {
            "application/json": { schema: ForecastReportSchema },
            "text/html": { schema: z.string() },
          },
        },
        ...errorResponses(...authenticatedErrors, 422),
      },
    }),
    async (c) => {
      const auth = c.get("auth");
      const body = (c.req.header("content-type") ?? "").toLowerCase().startsWith("application/json")
        ? c.req.valid("json")
        : ForecastRequestSchema.parse({});
      const rules: RuleSpec[] = [];
      for (const [index, text] of body.rules.entries()) {
        const spec = parseRuleSpec(text);
        if ("error" in spec)
          throw new ApiError(400, "validation_failed", spec.error, [
            { path: `rules.${index}`, message: spec.error },
          ]);
        rules.push(spec);
      }
      let prepared: Awaited<ReturnType<typeof prepareWorkspaceForecast>>;
      try {
        prepared = await prepareWorkspaceForecast(db, auth.workspaceId, {
          rules,
          simulations: body.sims,
          seed: body.seed,
          target: body.target ?? null,
          fallbackPrior: body.fallbackPrior ?? null,
          economics: body.economics ?? null,
          priorDraws: body.priorDraws,
          bootstrapReplicates: body.bootstrap,
        });
      } catch (error) {
        if (error instanceof ForecastSetupError) throw new ApiError(422, "unprocessable", error.message);
        throw error;
      }
      const tests = prepared.input.tests;
      const draws = body.sims * tests.length * rules.length;
      const figuresPerQuarter = storedFiguresPerQuarter(tests, rules.length);
      const largestSims = Math.max(
        2,
        Math.min(
          Math.floor(maximumForecastDraws / (tests.length * rules.length)),
          Math.floor(maximumForecastFigures / figuresPerQuarter),
        ),
      );
      if (body.sims > largestSims) {
        const message =
          draws > maximumForecastDraws
            ? `sims ${body.sims} x ${tests.length} planned tests x ${rules.length} rule(s) is ${draws} draws; the API runs at most ${maximumForecastDraws} in one request: ask for at most ${largestSims} sims, or run the larger forecast with the CLI (plumbline forecast --workspace ${JSON.stringify(auth.workspaceName)} --sims ${body.sims})`
            : `sims ${body.sims} x ${figuresPerQuarter} figures kept per simulated quarter (5 per rule, team and family) is ${body.sims * figuresPerQuarter}; the API keeps at most ${maximumForecastFigures} in one request: ask for at most ${largestSims} sims, or run the larger forecast with the CLI (plumbline forecast --workspace ${JSON.stringify(auth.workspaceName)} --sims ${body.sims})`;
        throw new ApiError(422, "unprocessable", message, [{ path: "sims", message }]);
      }
      const forecast = await runForecastInSteps(prepared.input);
      const report = forecastReport(forecast, {
        workspace: auth.workspaceName,
        priors: prepared.priors,
        rules: prepared.rules,
        assumptions: prepared.assumptions,
      });
      if (body.format === "html") return c.html(await renderForecastHtml(report), 200);
      return c.json(report, 200);
    },
  );
}
