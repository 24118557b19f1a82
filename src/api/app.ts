/**
 * The HTTP API: `createApp({ db })` builds the whole app (no module-level state), so that tests
 * run it in process with `app.request()` and the server only adds a socket.
 *
 * - GET /api/health answers without a token; everything under /api/v1 needs `Authorization: Bearer`.
 * - One error envelope `{ error: { code, message, issues? } }` for every failure (see errors.ts).
 * - /api/openapi.json is generated from the routes' zod schemas; /api/reference renders it.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { sql } from "drizzle-orm";
import type { Context } from "hono";
import { bodyLimit } from "hono/body-limit";
import { HTTPException } from "hono/http-exception";
import { requestId } from "hono/request-id";
import type { ContentfulStatusCode } from "hono/utils/http-status";
import { importLimits } from "../import/import-file.ts";
import type { ReviewRuns } from "../review/review-runs.ts";
import { StatsInputError } from "../stats/errors.ts";
import { webPages } from "../web/web-pages.ts";
import { authenticate } from "./auth.ts";
import type { AppDeps, AppEnv } from "./context.ts";
import { ApiError, type ErrorCode, type ErrorIssue, errorBody } from "./errors.ts";
import { renderLandingPage } from "./landing-page.ts";
import { renderReferencePage } from "./reference-page.ts";
import { backlogRoutes } from "./routes/backlog.ts";
import { calculatorsRoutes } from "./routes/calculators.ts";
import { calibrateRoutes } from "./routes/calibrate.ts";
import { experimentsRoutes } from "./routes/experiments.ts";
import { fitRoutes } from "./routes/fit.ts";
import { forecastRoutes } from "./routes/forecast.ts";
import { importsRoutes } from "./routes/imports.ts";
import { metricsRoutes } from "./routes/metrics.ts";
import { realizedRoutes } from "./routes/realized.ts";
import { resultsRoutes } from "./routes/results.ts";
import { apiReviewRuns, reviewRoutes } from "./routes/review.ts";
import { tokensRoutes } from "./routes/tokens.ts";
import { workspacesRoutes } from "./routes/workspaces.ts";

export interface AppOptions {
  /** Largest accepted request body, in bytes (imports carry whole files). */
  readonly maximumBodyBytes?: number;
  /** Where unexpected errors are reported (default console.error). */
  readonly logError?: (message: string, error: unknown) => void;
  /** The registry of review runs (default: one of the app's own); the server shares it with its preparer. */
  readonly reviewRuns?: ReviewRuns;
}

/** Twice the importer's file limit: a file sent inside a JSON body grows when it is escaped. */
export const defaultMaximumBodyBytes = 2 * importLimits.maxBytes;

export const apiVersion = "1";

export function createApp(deps: AppDeps, options: AppOptions = {}): OpenAPIHono<AppEnv> {
  const maximumBodyBytes = options.maximumBodyBytes ?? defaultMaximumBodyBytes;
  const logError = options.logError ?? ((message, error) => console.error(message, error));

  const app = new OpenAPIHono<AppEnv>({
    // Sub-routers resolve this hook from their parent at request time, so one hook covers all.
    defaultHook: (result) => {
      if (!result.success) {
        const issues = validationIssues(result.error, result.target);
        throw new ApiError(
          400,
          "validation_failed",
          `invalid ${targetNames[result.target] ?? result.target}: ${issues.map((issue) => `${issue.path}: ${issue.message}`).join("; ")}`,
          issues,
        );
      }
    },
  });

  app.use("*", requestId());
  app.use("*", async (c, next) => {
    await next();
    c.header("X-Request-Id", c.get("requestId"));
  });
  app.use(
    "/api/*",
    bodyLimit({
      maxSize: maximumBodyBytes,
      onError: () => {
        throw new ApiError(
          413,
          "payload_too_large",
          `request body is larger than the limit of ${formatBytes(maximumBodyBytes)}; split the file and send the parts`,
        );
      },
    }),
  );

  app.onError((error, c) => respondToError(error, c, logError));
  app.notFound((c) =>
    c.json(errorBody("not_found", `no route for ${c.req.method} ${c.req.path}; see /api/reference`), 404),
  );

  app.openAPIRegistry.registerComponent("securitySchemes", "bearerToken", {
    type: "http",
    scheme: "bearer",
    description: "A plumbline API token (plb_...). Each token belongs to one workspace and has a role.",
  });

  const HealthSchema = z
    .object({
      status: z.enum(["ok", "unavailable"]),
      database: z.enum(["ok", "unreachable"]),
      apiVersion: z.string(),
    })
    .openapi("Health");
  app.openapi(
    createRoute({
      method: "get",
      path: "/api/health",
      tags: ["service"],
      summary: "Whether the service and its database answer (no token needed)",
      security: [],
      responses: {
        200: {
          description: "The service and its database answer",
          content: { "application/json": { schema: HealthSchema } },
        },
        503: {
          description: "The database does not answer",
          content: { "application/json": { schema: HealthSchema } },
        },
      },
    }),
    async (c) => {
      try {
        await deps.db.run(sql`select 1`);
        return c.json({ status: "ok" as const, database: "ok" as const, apiVersion }, 200);
      } catch (error) {
        logError(
          `plumbline: health check could not reach the database (request ${c.get("requestId")})`,
          error,
        );
        return c.json({ status: "unavailable" as const, database: "unreachable" as const, apiVersion }, 503);
      }
    },
  );

  app.use("/api/v1/*", authenticate(deps.db));
  app.route("/api/v1", workspacesRoutes(deps));
  app.route("/api/v1", tokensRoutes(deps));
  app.route("/api/v1", backlogRoutes(deps));
  app.route("/api/v1", forecastRoutes(deps));
  app.route("/api/v1", metricsRoutes(deps));
  app.route("/api/v1", experimentsRoutes(deps));
  app.route("/api/v1", resultsRoutes(deps));
  app.route("/api/v1", realizedRoutes(deps));
  app.route("/api/v1", importsRoutes(deps));
  app.route("/api/v1", calibrateRoutes(deps));
  app.route("/api/v1", calculatorsRoutes(deps));
  app.route("/api/v1", reviewRoutes(deps, options.reviewRuns ?? apiReviewRuns(logError)));
  app.route("/api/v1", fitRoutes(deps));

  app.doc("/api/openapi.json", documentConfig);

  app.get("/api/reference", (c) => c.html(renderReferencePage(openApiDocument(app))));
  app.get("/", (c) => c.html(renderLandingPage()));
  app.route("/", webPages(deps));

  return app;
}

const documentConfig = {
  openapi: "3.0.3",
  info: {
    title: "plumbline API",
    version: apiVersion,
    description:
      "The HTTP API of plumbline: a company's A/B test history (metrics, experiments, results, " +
      "realized measurements, imports). Every /api/v1 route needs `Authorization: Bearer <token>`; " +
      "a token sees only its own workspace; roles are read < write < admin (each includes the ones " +
      "before it). Errors share one envelope `{ error: { code, message, issues? } }`. Workspaces are " +
      "created by an operator with `plumbline workspace create NAME`, which prints the workspace's " +
      "first admin token once.",
  },
  security: [{ bearerToken: [] }],
};

/** The OpenAPI document of an app, as served at /api/openapi.json. */
export function openApiDocument(app: OpenAPIHono<AppEnv>) {
  return app.getOpenAPIDocument(documentConfig);
}

function respondToError(
  error: Error,
  c: Context<AppEnv>,
  logError: (message: string, error: unknown) => void,
): Response {
  if (error instanceof ApiError)
    return c.json(errorBody(error.code, error.message, error.issues), error.status);
  if (error instanceof StatsInputError) {
    return c.json(
      errorBody("unprocessable", error.message, [{ path: error.parameter, message: error.message }]),
      422,
    );
  }
  if (error instanceof HTTPException) {
    const status = error.status as ContentfulStatusCode;
    if (status === 415)
      return c.json(
        errorBody(
          "bad_request",
          `unsupported Content-Type ${JSON.stringify(c.req.header("content-type") ?? "")}; send application/json (imports also take text/csv)`,
        ),
        415,
      );
    return c.json(errorBody(codeForStatus(status), error.message || "request refused"), status);
  }
  const id = c.get("requestId");
  logError(`plumbline: unexpected error on ${c.req.method} ${c.req.path} (request ${id})`, error);
  return c.json(errorBody("internal", `internal error; quote request id ${id} when reporting it`), 500);
}

function codeForStatus(status: number): ErrorCode {
  switch (status) {
    case 400:
      return "bad_request";
    case 401:
      return "unauthorized";
    case 403:
      return "forbidden";
    case 404:
      return "not_found";
    case 409:
      return "conflict";
    case 413:
      return "payload_too_large";
    case 422:
      return "unprocessable";
    default:
      return status >= 500 ? "internal" : "bad_request";
  }
}

/** How the validation targets are called in messages. */
const targetNames: Record<string, string> = {
  json: "request body",
  form: "request body",
  query: "query parameters",
  param: "path parameters",
  header: "headers",
  cookie: "cookies",
};

interface ZodLikeError {
  readonly issues: readonly { readonly path: readonly PropertyKey[]; readonly message: string }[];
}

function validationIssues(error: ZodLikeError, target: string): ErrorIssue[] {
  return error.issues.map((issue) => ({
    path: issue.path.length > 0 ? issue.path.map(String).join(".") : target,
    message: issue.message,
  }));
}

function formatBytes(bytes: number): string {
  if (bytes >= 1024 * 1024)
    return `${(bytes / (1024 * 1024)).toFixed(bytes % (1024 * 1024) === 0 ? 0 : 1)} MiB`;
  if (bytes >= 1024) return `${(bytes / 1024).toFixed(bytes % 1024 === 0 ? 0 : 1)} KiB`;
  return `${bytes} bytes`;
}
