/**
 * POST /fit: the empirical-Bayes fit of the distribution of true effects (statistics.md section 5)
 * to a workspace's stored primary results of one metric family. A/A tests and results flagged for
 * sample ratio mismatch are left out by default (and counted); the answer carries the fitted prior,
 * its summary (null share, win and loss rates, sizes), the density for charting, optional bootstrap
 * intervals, and optionally every result's posterior. Computes only; any role may call it.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { and, eq } from "drizzle-orm";
import { experiments, metrics, results } from "../../db/schema.ts";
import { bootstrapPrior, summaryFigures } from "../../stats/bootstrap-prior.ts";
import type { PriorComponent } from "../../stats/effect-prior.ts";
import { StatsInputError } from "../../stats/errors.ts";
import { defaultNullWeight, type FamilyFit, fitEffectPrior } from "../../stats/fit-effect-prior.ts";
import { defaultCredibleLevel } from "../../stats/posterior.ts";
import { summarizePrior } from "../../stats/prior-summary.ts";
import { helperThread } from "../../threads/helper-thread.ts";
import { posteriorColumnsOnThreads, threadedPosteriorRows } from "../../threads/posterior-threads.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

/** Upper bound on bootstrap refits of one request. */
export const maximumBootstrapReplicates = 2000;

const FitRequestSchema = z
  .object({
    metricFamily: z
      .string()
      .trim()
      .min(1)
      .openapi({ description: "The metric family to fit", example: "conversion" }),
    family: z.enum(["symmetric", "skewed", "grid", "auto"]).default("auto").openapi({
      description: "Prior family; auto picks the better of symmetric and skewed by log-likelihood",
    }),
    nullWeight: z
      .number()
      .min(1)
      .finite()
      .default(defaultNullWeight)
      .openapi({ description: "Penalty favouring the null share (1 = none; default 10, as ashr)" }),
    threshold: z
      .number()
      .min(0)
      .finite()
      .default(0)
      .openapi({ description: "Practical threshold delta of the win and loss rates" }),
    level: z
      .number()
      .gt(0)
      .lt(1)
      .default(defaultCredibleLevel)
      .openapi({ description: "Level of credible and bootstrap intervals" }),
    bootstrap: z
      .number()
      .int()
      .min(0)
      .max(maximumBootstrapReplicates)
      .default(0)
      .openapi({ description: "Bootstrap refits for intervals (0 = none)" }),
    seed: z.number().int().default(1),
    includeAa: z.boolean().default(false).openapi({ description: "Keep A/A tests in the fit" }),
    includeSampleRatioMismatch: z
      .boolean()
      .default(false)
      .openapi({ description: "Keep SRM-flagged results" }),
    posteriors: z.boolean().default(false).openapi({ description: "Return every result's posterior" }),
  })
  .openapi("FitRequest");

const IntervalSchema = z
  .object({ estimate: z.number(), lower: z.number(), upper: z.number(), standardError: z.number() })
  .nullable();

const FitReportSchema = z
  .object({
    metricFamily: z.string(),
    counts: z.object({
      used: z.number().int(),
      leftOutAa: z.number().int(),
      leftOutSampleRatioMismatch: z.number().int(),
    }),
    family: z.enum(["symmetric", "skewed", "grid"]),
    components: z.array(z.object({ kind: z.string(), weight: z.number() }).passthrough()),
    nullWeight: z.number(),
    logLik: z.number(),
    penalizedLogLik: z.number(),
    iterations: z.number().int(),
    converged: z.boolean(),
    optimalityGap: z.number(),
    summary: z.object({
      threshold: z.number(),
      nullShare: z.number(),
      winRate: z.number(),
      lossRate: z.number(),
      meanWinSize: z.number().nullable(),
      meanLossSize: z.number().nullable(),
      mean: z.number(),
      sd: z.number(),
    }),
    density: z.object({ theta: z.array(z.number()), density: z.array(z.number()) }),
    atoms: z.array(z.object({ theta: z.number(), mass: z.number() })),
    alternatives: z
      .array(
        z.object({
          family: z.string(),
          logLik: z.number(),
          iterations: z.number().int(),
          converged: z.boolean(),
          optimalityGap: z.number(),
          nullShare: z.number(),
        }),
      )
      .optional(),
    intervals: z
      .object({
        replicates: z.number().int(),
        seed: z.number().nullable(),
        level: z.number(),
        convergedRefits: z.number().int(),
      })
      .catchall(IntervalSchema)
      .optional(),
    posteriors: z
      .array(
        z.object({
          experiment: z.string(),
          y: z.number(),
          s: z.number(),
          mean: z.number(),
          sd: z.number(),
          lower: z.number(),
          upper: z.number(),
          probPositive: z.number(),
          probNull: z.number(),
          probNegative: z.number(),
          lfsr: z.number(),
        }),
      )
      .optional(),
    assumptions: z.array(z.string()),
    cautions: z.array(z.string()),
  })
  .openapi("FitReport");

const assumptions = [
  "Each result is an unbiased normal estimate y ~ N(theta, s^2) of its true relative lift, with s known.",
  "True lifts of one metric family are independent draws from one prior.",
  "The null penalty settles the split between exact nulls and tiny effects, which the data barely identify; the null share is conservative by design.",
];
const cautions = [
  "These estimates do not replace a statistician's review.",
  "Not for clinical or safety-critical decisions.",
];

function describeComponent(component: PriorComponent): { kind: string } & Record<string, unknown> {
  return { ...component };
}

function describeAlternative(fit: FamilyFit) {
  return {
    family: fit.family,
    logLik: fit.logLik,
    iterations: fit.iterations,
    converged: fit.converged,
    optimalityGap: fit.optimalityGap,
    nullShare: fit.componentWeights[0] ?? 0,
  };
}

export function fitRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>().openapi(
    createRoute({
      ...requiredRole("read"),
      method: "post",
      path: "/fit",
      tags: ["fit"],
      summary: "Fit the distribution of true effects to a metric family's stored primary results",
      request: { body: { content: { "application/json": { schema: FitRequestSchema } }, required: true } },
      responses: {
        200: {
          description: "The fitted prior, its summary, density, optional intervals and posteriors",
          content: { "application/json": { schema: FitReportSchema } },
        },
        ...errorResponses(...authenticatedErrors, 422),
      },
    }),
    async (c) => {
      const body = c.req.valid("json");
      const workspaceId = c.get("auth").workspaceId;
      const rows = await db
        .select({
          y: results.lift,
          s: results.liftSe,
          isAa: experiments.isAa,
          srmFlagged: results.srmFlagged,
          experiment: experiments.key,
        })
        .from(results)
        .innerJoin(metrics, eq(results.metricId, metrics.id))
        .innerJoin(experiments, eq(results.experimentId, experiments.id))
        .where(
          and(
            eq(metrics.workspaceId, workspaceId),
            eq(metrics.family, body.metricFamily),
            eq(results.isPrimary, true),
          ),
        )
        .orderBy(experiments.key);
      let leftOutAa = 0;
      let leftOutSampleRatioMismatch = 0;
      const kept = rows.filter((row) => {
        if (row.isAa && !body.includeAa) {
          leftOutAa++;
          return false;
        }
        if (row.srmFlagged && !body.includeSampleRatioMismatch) {
          leftOutSampleRatioMismatch++;
          return false;
        }
        return Number.isFinite(row.y) && row.s > 0;
      });
      if (kept.length === 0)
        throw new ApiError(
          422,
          "unprocessable",
          `no primary results to fit in metric family "${body.metricFamily}"`,
          [
            {
              path: "metricFamily",
              message: `${rows.length} primary results, ${leftOutAa} A/A and ${leftOutSampleRatioMismatch} SRM-flagged left out`,
            },
          ],
        );
      const observations = kept.map((row) => ({ y: row.y, s: row.s }));
      // Many posteriors are shared with the helper thread: started now, it is up once the fit is done.
      if (body.posteriors && observations.length >= threadedPosteriorRows) helperThread();
      try {
        const fit = fitEffectPrior(observations, { family: body.family, nullWeight: body.nullWeight });
        const summary = summarizePrior(fit.prior, { threshold: body.threshold });
        const bootstrap =
          body.bootstrap > 0
            ? bootstrapPrior(observations, fit, {
                replicates: body.bootstrap,
                seed: body.seed,
                threshold: body.threshold,
                level: body.level,
              })
            : undefined;
        const columns = body.posteriors
          ? await posteriorColumnsOnThreads(
              fit.prior,
              observations.map((observation) => observation.y),
              observations.map((observation) => observation.s),
              body.level,
            )
          : undefined;
        const report = {
          metricFamily: body.metricFamily,
          counts: { used: kept.length, leftOutAa, leftOutSampleRatioMismatch },
          family: fit.family,
          components: fit.prior.components.map(({ component, weight }) => ({
            ...describeComponent(component),
            weight,
          })),
          nullWeight: fit.nullWeight,
          logLik: fit.logLik,
          penalizedLogLik: fit.penalizedLogLik,
          iterations: fit.iterations,
          converged: fit.converged,
          optimalityGap: fit.optimalityGap,
          summary: {
            threshold: summary.threshold,
            nullShare: summary.nullShare,
            winRate: summary.winRate,
            lossRate: summary.lossRate,
            meanWinSize: summary.meanWinSize,
            meanLossSize: summary.meanLossSize,
            mean: summary.mean,
            sd: summary.sd,
          },
          density: { theta: [...summary.density.theta], density: [...summary.density.density] },
          atoms: [...summary.atoms],
          ...(fit.alternatives ? { alternatives: fit.alternatives.map(describeAlternative) } : {}),
          ...(bootstrap
            ? {
                intervals: {
                  replicates: bootstrap.replicates,
                  seed: bootstrap.seed,
                  level: bootstrap.level,
                  convergedRefits: bootstrap.convergedCount,
                  ...Object.fromEntries(
                    summaryFigures.map((figure) => [figure, bootstrap.intervals[figure]]),
                  ),
                },
              }
            : {}),
          ...(columns
            ? {
                posteriors: kept.map((row, i) => ({
                  experiment: row.experiment,
                  y: row.y,
                  s: row.s,
                  mean: columns.mean[i] as number,
                  sd: columns.sd[i] as number,
                  lower: columns.lower[i] as number,
                  upper: columns.upper[i] as number,
                  probPositive: columns.probPositive[i] as number,
                  probNull: columns.probNull[i] as number,
                  probNegative: columns.probNegative[i] as number,
                  lfsr: columns.lfsr[i] as number,
                })),
              }
            : {}),
          assumptions,
          cautions,
        };
        return c.json(report as z.infer<typeof FitReportSchema>, 200);
      } catch (error) {
        if (error instanceof StatsInputError)
          throw new ApiError(422, "unprocessable", error.message, [
            { path: error.parameter, message: error.message },
          ]);
        throw error;
      }
    },
  );
}
