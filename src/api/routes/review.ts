/**
 * The program review over HTTP: compute (or read from cache) the review of a metric family, its
 * per-test table (JSON or CSV), the self-contained HTML report, and saved reviews (save, list,
 * show, compare). Settings travel as query parameters so that identical requests are cacheable.
 * A review whose data and settings were seen before answers from the cache (`cached: true`).
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import type { JSONValue } from "hono/utils/types";
import { reviewCsv } from "../../report/review-csv.ts";
import { reviewHtml } from "../../report/review-html.ts";
import { ReviewDataError } from "../../review/read-review-data.ts";
import { type ReviewRun, type ReviewRunError, ReviewRuns, startReviewRun } from "../../review/review-runs.ts";
import type { ReviewRequest } from "../../review/run-review.ts";
import {
  compareReviews,
  listReviews,
  SavedReviewError,
  saveReview,
  showReview,
} from "../../review/saved-reviews.ts";
import { StatsInputError } from "../../stats/errors.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses, IsoDateSchema } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

/** Review results are plain readonly objects that came through JSON; hono types JSON as mutable. */
function asJson(value: object): Record<string, JSONValue> {
  return value as unknown as Record<string, JSONValue>;
}

const reviewQueryShape = {
  family: z
    .string()
    .min(1)
    .optional()
    .openapi({ description: "Metric family (default: the one with the most primary results)" }),
  team: z.string().min(1).optional().openapi({ description: "Only this team's tests" }),
  from: IsoDateSchema.optional().openapi({
    description: "Tests decided (else ended, else started) on or after this date",
  }),
  to: IsoDateSchema.optional().openapi({ description: "... on or before this date" }),
  quarter: z
    .string()
    .regex(/^\d{4}Q[1-4]$/, "must be a quarter such as 2026Q3")
    .optional()
    .openapi({ description: "A calendar quarter instead of from/to", example: "2026Q3" }),
  delta: z.coerce
    .number()
    .min(0)
    .optional()
    .openapi({ description: "A false win has true effect <= delta (default 0)" }),
  practical: z.coerce
    .number()
    .min(0)
    .optional()
    .openapi({ description: "Also report false wins at this practical threshold" }),
  alpha: z.coerce
    .number()
    .gt(0)
    .lt(1)
    .optional()
    .openapi({ description: "Two-sided level of the launch rule (default 0.05)" }),
  priorFamily: z.enum(["auto", "symmetric", "skewed", "grid"]).optional(),
  bootstrap: z.coerce
    .number()
    .int()
    .min(0)
    .max(2000)
    .optional()
    .openapi({ description: "Bootstrap refits of the prior behind the intervals (default 100; 0 = none)" }),
  seed: z.coerce.number().int().optional(),
};

function withRangeChecks<
  T extends z.ZodType<{ quarter?: string | undefined; from?: string | undefined; to?: string | undefined }>,
>(schema: T) {
  return schema
    .refine((query) => !(query.quarter && (query.from || query.to)), {
      path: ["quarter"],
      message: "use quarter or from/to, not both",
    })
    .refine((query) => !query.from || !query.to || query.from <= query.to, {
      path: ["to"],
      message: "must be on or after from",
    });
}

const ReviewQuerySchema = withRangeChecks(z.object(reviewQueryShape));
const ReviewTestsQuerySchema = withRangeChecks(
  z.object({
    ...reviewQueryShape,
    format: z.enum(["json", "csv"]).optional().openapi({ description: "json (default) or csv" }),
  }),
);

type ReviewQuery = z.infer<typeof ReviewQuerySchema>;

const EstimateSchema = z
  .object({
    estimate: z.number().nullable(),
    interval: z
      .object({ lower: z.number().nullable(), upper: z.number().nullable(), level: z.number() })
      .nullable(),
  })
  .openapi("ReviewEstimate");

const ReviewSummarySchema = z
  .object({
    cached: z
      .boolean()
      .openapi({ description: "Served from the cache of identical requests on unchanged data" }),
    metricFamily: z.string(),
    dataFingerprint: z.string().openapi({ description: "SHA-256 of the rows the review read" }),
    shipped: z.number().int(),
    expectedRealWins: EstimateSchema,
    expectedFalseWins: EstimateSchema,
    falseDiscoveryRate: EstimateSchema,
    expectedSignErrors: EstimateSchema,
    claimedTotalLift: z.object({ sum: z.number(), compounded: z.number() }),
    expectedRealizedLift: z.object({ sum: z.number().nullable(), compounded: z.number().nullable() }).loose(),
    realizationRatio: EstimateSchema,
    exaggerationFactor: EstimateSchema,
    winnersCurseBias: z
      .object({})
      .loose()
      .openapi({ description: "frequentist (Lee & Shen 2018) and bayesian" }),
    missedWins: EstimateSchema.extend({ notShipped: z.number().int() }),
    aa: z.object({}).loose(),
    caliper: z.object({}).loose(),
    assumptions: z.object({ statements: z.array(z.string()) }).loose(),
    cautions: z.array(z.string()),
  })
  .loose()
  .openapi("ProgramReview");

const ReviewTestsSchema = z
  .object({
    cached: z.boolean(),
    count: z.number().int(),
    tests: z.array(z.object({}).loose()),
    cautions: z.array(z.string()),
  })
  .openapi("ProgramReviewTests");

const SaveReviewSchema = z
  .object({
    label: z.string().min(1).max(80).openapi({ example: "2026Q3 close" }),
    settings: ReviewQuerySchema.optional().openapi({ description: "The same settings as GET /review" }),
  })
  .openapi("SaveReviewRequest");

const SavedListingSchema = z
  .object({
    reviews: z.array(
      z.object({
        id: z.number().int(),
        label: z.string(),
        createdAt: z.string(),
        family: z.string().openapi({ description: "The metric family reviewed" }),
        priorFamily: z.string(),
        dataFingerprint: z.string(),
        shipped: z.number().int(),
        falseDiscoveryRate: z.number().nullable(),
        realizationRatio: z.number().nullable(),
      }),
    ),
  })
  .openapi("SavedReviewList");

const SavedReviewSchema = z
  .object({
    id: z.number().int(),
    label: z.string(),
    createdAt: z.string(),
    dataFingerprint: z.string(),
    review: z.object({}).loose(),
  })
  .loose()
  .openapi("SavedReview");

const ComparisonSchema = z
  .object({
    sameData: z.boolean(),
    settingsChanged: z.array(z.string()),
    figures: z.array(
      z.object({
        figure: z.string(),
        before: z.number().nullable(),
        after: z.number().nullable(),
        change: z.number().nullable(),
      }),
    ),
    cautions: z.array(z.string()),
  })
  .loose()
  .openapi("ReviewComparison");

const ReviewRunRequestSchema = z
  .object({
    settings: ReviewQuerySchema.optional().openapi({ description: "The same settings as GET /review" }),
    tests: z
      .boolean()
      .optional()
      .openapi({ description: "Also compute and cache the per-test table (default false)" }),
  })
  .openapi("ReviewRunRequest");

const ReviewRunSchema = z
  .object({
    id: z.string(),
    state: z.enum(["running", "ready", "failed"]),
    stage: z.string().nullable().openapi({ description: "What the run is doing now (its latest stage)" }),
    stages: z.array(z.object({ message: z.string(), atSeconds: z.number() })),
    startedAt: z.string(),
    finishedAt: z.string().nullable(),
    elapsedSeconds: z.number(),
    includesTests: z.boolean(),
    cached: z.boolean(),
    poll: z.string().openapi({ description: "Where to read the run again" }),
    review: ReviewSummarySchema.nullable().openapi({ description: "The review, once the run is ready" }),
    error: z.object({ status: z.number().int(), code: z.string(), message: z.string() }).nullable(),
  })
  .openapi("ReviewRun");

const RunParamSchema = z.object({
  id: z
    .string()
    .min(1)
    .openapi({ param: { name: "id", in: "path" } }),
});

const LabelParamSchema = z.object({
  label: z
    .string()
    .min(1)
    .openapi({ param: { name: "label", in: "path" }, example: "2026Q3 close" }),
});

function toRequest(query: ReviewQuery): ReviewRequest {
  return {
    filters: {
      ...(query.family ? { family: query.family } : {}),
      ...(query.team ? { team: query.team } : {}),
      ...(query.from ? { from: query.from } : {}),
      ...(query.to ? { to: query.to } : {}),
      ...(query.quarter ? { quarter: query.quarter } : {}),
    },
    ...(query.delta !== undefined ? { delta: query.delta } : {}),
    ...(query.practical !== undefined ? { practicalThreshold: query.practical } : {}),
    ...(query.alpha !== undefined ? { alpha: query.alpha } : {}),
    ...(query.priorFamily ? { priorFamily: query.priorFamily } : {}),
    ...(query.seed !== undefined ? { seed: query.seed } : {}),
    ...(query.bootstrap !== undefined ? { bootstrap: query.bootstrap } : {}),
  };
}

/** The API error a review error answers with, or null for an error the app handles itself. */
function reviewApiError(error: unknown): ApiError | null {
  if (error instanceof ReviewDataError || error instanceof RangeError)
    return new ApiError(422, "unprocessable", error.message);
  if (error instanceof SavedReviewError) {
    if (error.reason === "exists") return new ApiError(409, "conflict", error.message);
    if (error.reason === "not_found") return new ApiError(404, "not_found", error.message);
    return new ApiError(400, "validation_failed", error.message, [{ path: "label", message: error.message }]);
  }
  return null;
}

function mapReviewError(error: unknown): never {
  throw reviewApiError(error) ?? error;
}

/** What a failed run reports: the status and envelope the same request would have answered with. */
function runError(error: unknown, logError: (message: string, error: unknown) => void): ReviewRunError {
  const mapped = reviewApiError(error);
  if (mapped) return { status: mapped.status, code: mapped.code, message: mapped.message };
  if (error instanceof StatsInputError) return { status: 422, code: "unprocessable", message: error.message };
  logError("plumbline: unexpected error in a review run", error);
  return { status: 500, code: "internal", message: "internal error in the review run; see the server's log" };
}

function runView(run: ReviewRun, now: Date) {
  const end = run.finishedAt ?? now;
  return {
    id: run.id,
    state: run.state,
    stage: run.stages.at(-1)?.message ?? null,
    stages: [...run.stages],
    startedAt: run.startedAt.toISOString(),
    finishedAt: run.finishedAt?.toISOString() ?? null,
    elapsedSeconds: (end.getTime() - run.startedAt.getTime()) / 1000,
    includesTests: run.includesTests,
    cached: run.cached,
    poll: `/api/v1/review/runs/${run.id}`,
    review: run.summary
      ? ({ cached: run.cached, ...run.summary } as unknown as z.infer<typeof ReviewSummarySchema>)
      : null,
    error: run.error,
  };
}

/** The registry of review runs for an app, its failures described as the API reports errors. */
export function apiReviewRuns(logError: (message: string, error: unknown) => void): ReviewRuns {
  return new ReviewRuns({ describeError: (error) => runError(error, logError) });
}

/** `runs`: one registry per app (identical requests share a computation; runs are polled by id). */
export function reviewRoutes({ db }: AppDeps, runs: ReviewRuns): ApiRouter {
  const startRun = (workspaceId: number, query: ReviewQuery, includeTests: boolean, readTable = true) =>
    startReviewRun(db, runs, workspaceId, toRequest(query), includeTests, { readTable });

  async function compute(workspaceId: number, query: ReviewQuery, includeTests: boolean) {
    try {
      return await (await startRun(workspaceId, query, includeTests)).outcome;
    } catch (error) {
      return mapReviewError(error);
    }
  }

  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        method: "get",
        path: "/review",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "The program review of a metric family (cached by settings and data)",
        description:
          "Of the wins shipped, how many were real; how much of the claimed lift to expect; missed wins; confusion matrices; " +
          "realized measurements; pipeline checks (A/A, p-values, caliper test); sensitivity to the prior family. " +
          "The per-test table is at /review/tests, the HTML report at /review/report.",
        request: { query: ReviewQuerySchema },
        responses: {
          200: {
            description: "The review",
            content: { "application/json": { schema: ReviewSummarySchema } },
          },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      async (c) => {
        const outcome = await compute(c.get("auth").workspaceId, c.req.valid("query"), false);
        return c.json(
          { cached: outcome.cached, ...outcome.summary } as unknown as z.infer<typeof ReviewSummarySchema>,
          200,
        );
      },
    )
    .openapi(
      createRoute({
        method: "post",
        path: "/review/runs",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "Start the review in the background and follow its progress",
        description:
          "Answers 200 with the review when it is cached, else 202 with the run (its stages so far); poll " +
          "GET /review/runs/{id} until state is ready or failed. An identical review already running is joined, " +
          "not started twice. Finished runs are kept 15 minutes.",
        request: {
          body: { required: false, content: { "application/json": { schema: ReviewRunRequestSchema } } },
        },
        responses: {
          200: {
            description: "Ready (from the cache)",
            content: { "application/json": { schema: ReviewRunSchema } },
          },
          202: {
            description: "Running; poll the run",
            content: { "application/json": { schema: ReviewRunSchema } },
          },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      async (c) => {
        const body = c.req.valid("json") ?? {};
        // The run view never carries the table: a cached one is only checked for.
        const { run } = await startRun(
          c.get("auth").workspaceId,
          body.settings ?? {},
          body.tests ?? false,
          false,
        );
        const view = runView(run, new Date());
        if (run.state === "running") {
          c.header("Location", view.poll);
          c.header("Retry-After", "1");
          return c.json(view, 202);
        }
        return c.json(view, 200);
      },
    )
    .openapi(
      createRoute({
        method: "get",
        path: "/review/runs/{id}",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "A review run: its state, stages, and the review once ready",
        request: { params: RunParamSchema },
        responses: {
          200: { description: "The run", content: { "application/json": { schema: ReviewRunSchema } } },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { id } = c.req.valid("param");
        const run = runs.get(c.get("auth").workspaceId, id);
        if (!run)
          throw new ApiError(
            404,
            "not_found",
            `no review run ${JSON.stringify(id)} in this workspace (finished runs are kept 15 minutes)`,
          );
        return c.json(runView(run, new Date()), 200);
      },
    )
    .openapi(
      createRoute({
        method: "get",
        path: "/review/tests",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "The review's per-test table (JSON, or CSV with format=csv)",
        request: { query: ReviewTestsQuerySchema },
        responses: {
          200: {
            description: "One row per reviewed test",
            content: {
              "application/json": { schema: ReviewTestsSchema },
              "text/csv": { schema: z.string() },
            },
          },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      async (c) => {
        const { format, ...query } = c.req.valid("query");
        const outcome = await compute(c.get("auth").workspaceId, query, true);
        const tests = outcome.tests ?? [];
        if (format === "csv") {
          return c.body(reviewCsv(tests), 200, {
            "Content-Type": "text/csv; charset=utf-8",
            "Content-Disposition": 'attachment; filename="review-tests.csv"',
          });
        }
        return c.json(
          {
            cached: outcome.cached,
            count: tests.length,
            tests: [...tests],
            cautions: [...outcome.summary.cautions],
          },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        method: "get",
        path: "/review/report",
        tags: ["review"],
        ...requiredRole("read"),
        summary:
          "The review as a self-contained HTML page (charts as inline SVG; no network needed to view it)",
        request: { query: ReviewQuerySchema },
        responses: {
          200: { description: "HTML report", content: { "text/html": { schema: z.string() } } },
          ...errorResponses(...authenticatedErrors, 422),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const outcome = await compute(auth.workspaceId, c.req.valid("query"), true);
        const html = await reviewHtml(outcome.summary, outcome.tests ?? [], {
          workspaceName: auth.workspaceName,
          generatedAt: new Date().toISOString(),
        });
        return c.html(html, 200);
      },
    )
    .openapi(
      createRoute({
        method: "post",
        path: "/reviews",
        tags: ["review"],
        ...requiredRole("write"),
        summary: "Save a review as an immutable snapshot under a new label",
        request: { body: { required: true, content: { "application/json": { schema: SaveReviewSchema } } } },
        responses: {
          201: { description: "Saved", content: { "application/json": { schema: SavedReviewSchema } } },
          ...errorResponses(...authenticatedErrors, 409, 422),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const body = c.req.valid("json");
        const outcome = await compute(auth.workspaceId, body.settings ?? {}, true);
        try {
          const saved = await saveReview(
            db,
            auth.workspaceId,
            body.label,
            outcome.summary,
            outcome.tests ?? [],
          );
          return c.json(
            {
              id: saved.id,
              label: saved.label,
              createdAt: saved.createdAt,
              dataFingerprint: saved.dataFingerprint,
              review: asJson(saved.summary),
            },
            201,
          );
        } catch (error) {
          return mapReviewError(error);
        }
      },
    )
    .openapi(
      createRoute({
        method: "get",
        path: "/reviews",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "Saved reviews, newest first",
        responses: {
          200: {
            description: "Saved reviews",
            content: { "application/json": { schema: SavedListingSchema } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => c.json({ reviews: await listReviews(db, c.get("auth").workspaceId) }, 200),
    )
    .openapi(
      createRoute({
        method: "get",
        path: "/reviews/compare",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "Compare two saved reviews figure by figure",
        request: {
          query: z.object({
            before: z.string().min(1).openapi({ description: "Label (or id) of the earlier review" }),
            after: z.string().min(1).openapi({ description: "Label (or id) of the later review" }),
          }),
        },
        responses: {
          200: { description: "What changed", content: { "application/json": { schema: ComparisonSchema } } },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { before, after } = c.req.valid("query");
        const workspaceId = c.get("auth").workspaceId;
        try {
          const first = await showReview(db, workspaceId, before);
          const second = await showReview(db, workspaceId, after);
          const comparison = compareReviews(first, second);
          return c.json(
            {
              ...comparison,
              figures: [...comparison.figures],
              settingsChanged: [...comparison.settingsChanged],
              cautions: [...second.summary.cautions],
            },
            200,
          );
        } catch (error) {
          return mapReviewError(error);
        }
      },
    )
    .openapi(
      createRoute({
        method: "get",
        path: "/reviews/{label}",
        tags: ["review"],
        ...requiredRole("read"),
        summary: "One saved review (add include=tests for its per-test table)",
        request: { params: LabelParamSchema, query: z.object({ include: z.enum(["tests"]).optional() }) },
        responses: {
          200: {
            description: "The saved review",
            content: { "application/json": { schema: SavedReviewSchema } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { label } = c.req.valid("param");
        const { include } = c.req.valid("query");
        try {
          const saved = await showReview(db, c.get("auth").workspaceId, label);
          return c.json(
            {
              id: saved.id,
              label: saved.label,
              createdAt: saved.createdAt,
              dataFingerprint: saved.dataFingerprint,
              settings: saved.settings,
              review: asJson(saved.summary),
              ...(include === "tests" ? { tests: saved.tests.map(asJson) } : {}),
            },
            200,
          );
        } catch (error) {
          return mapReviewError(error);
        }
      },
    );
}
