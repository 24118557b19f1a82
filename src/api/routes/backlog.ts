/**
 * The backlog of planned tests: list, read, create, replace, change in part, delete, and import a
 * CSV (or JSON) file all or nothing (the layout of templates/backlog-template.csv). Field
 * problems answer 400 with one issue per field; a rejected import answers 422 with every bad
 * row and column and writes nothing.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { importBacklog } from "../../backlog/import-backlog.ts";
import type { PlannedTestFields } from "../../backlog/planned-test-fields.ts";
import {
  BacklogError,
  deletePlannedTest,
  fieldsOf,
  getPlannedTest,
  listPlannedTests,
  savePlannedTest,
} from "../../backlog/planned-tests.ts";
import { requiredRole, requireRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";
import { readUploadedFile, rejectedImportBody } from "../uploaded-file.ts";

const PriorOverrideSchema = z
  .object({
    winRate: z.number().min(0).max(1),
    lossRate: z.number().min(0).max(1).optional(),
    effectScale: z.number().positive(),
    shape: z.enum(["normal", "fat"]).optional(),
  })
  .openapi("PriorOverride", { description: "A team's assumed prior (statistics.md section 7)" });

const positive = () => z.number().positive().nullable().optional();

const PlannedTestBodySchema = z
  .object({
    key: z.string().trim().min(1).max(200).openapi({ example: "checkout-express-pay" }),
    name: z.string().trim().min(1).max(500),
    team: z.string().trim().min(1).nullable().optional(),
    metric: z.string().trim().min(1).openapi({ description: "The metric's key", example: "order_rate" }),
    plannedStart: z.iso.date().nullable().optional(),
    dailyTraffic: positive().openapi({ description: "Eligible users per day, all arms together" }),
    nPerArm: z.number().int().positive().nullable().optional(),
    runDays: positive(),
    arms: z.number().int().min(2).default(2),
    baselineRate: z.number().gt(0).lt(1).nullable().optional(),
    baselineMean: z.number().nullable().optional(),
    baselineSd: positive(),
    standardError: positive().openapi({ description: "The planned SE of the relative lift, if stated" }),
    priorOverride: PriorOverrideSchema.nullable().optional(),
    status: z.enum(["planned", "running", "done"]).default("planned"),
    experiment: z
      .string()
      .trim()
      .min(1)
      .nullable()
      .optional()
      .openapi({ description: "The experiment's key" }),
  })
  .openapi("PlannedTestInput");

const PlannedTestPatchSchema = PlannedTestBodySchema.omit({ key: true })
  .partial()
  .openapi("PlannedTestPatch", { description: "Only the fields given change; null clears a field" });

const PlannedTestSchema = z
  .object({
    id: z.number().int(),
    key: z.string(),
    name: z.string(),
    team: z.string().nullable(),
    metric: z.string(),
    metricFamily: z.string(),
    plannedStart: z.string().nullable(),
    dailyTraffic: z.number().nullable(),
    nPerArm: z.number().nullable(),
    runDays: z.number().nullable(),
    arms: z.number().int(),
    baselineRate: z.number().nullable(),
    baselineMean: z.number().nullable(),
    baselineSd: z.number().nullable(),
    standardError: z.number().nullable(),
    priorOverride: PriorOverrideSchema.nullable(),
    status: z.enum(["planned", "running", "done"]),
    experiment: z.string().nullable(),
    plannedStandardError: z.number().nullable().openapi({ description: "statistics.md section 7" }),
    createdAt: z.string(),
    updatedAt: z.string().nullable(),
  })
  .openapi("PlannedTest");

const KeyParamSchema = z.object({
  key: z
    .string()
    .min(1)
    .openapi({ param: { name: "key", in: "path" }, example: "checkout-express-pay" }),
});

const RowErrorSchema = z.object({
  row: z.number().int(),
  column: z.string().nullable(),
  message: z.string(),
});

const BacklogImportReportSchema = z
  .object({
    importId: z.number().int(),
    outcome: z.enum(["applied", "rejected", "dry_run"]),
    rows: z.number().int(),
    created: z.number().int(),
    updated: z.number().int(),
    unchanged: z.number().int(),
    errors: z.array(RowErrorSchema),
  })
  .openapi("BacklogImportReport");

const BacklogImportBodySchema = z.object({
  fileName: z.string().trim().min(1).max(255).optional(),
  content: z.string().min(1),
  format: z.enum(["csv", "json"]).optional(),
  dryRun: z.boolean().default(false),
});

const BacklogImportQuerySchema = z.object({
  fileName: z.string().trim().min(1).max(255).optional(),
  dryRun: z
    .enum(["true", "false"])
    .transform((text) => text === "true")
    .optional(),
});

type Body = z.infer<typeof PlannedTestBodySchema>;

function toFields(body: Body): PlannedTestFields {
  return {
    key: body.key,
    name: body.name,
    team: body.team ?? null,
    metric: body.metric,
    plannedStart: body.plannedStart ?? null,
    dailyTraffic: body.dailyTraffic ?? null,
    nPerArm: body.nPerArm ?? null,
    runDays: body.runDays ?? null,
    arms: body.arms,
    baselineRate: body.baselineRate ?? null,
    baselineMean: body.baselineMean ?? null,
    baselineSd: body.baselineSd ?? null,
    standardError: body.standardError ?? null,
    priorOverride: body.priorOverride ?? null,
    status: body.status,
    experiment: body.experiment ?? null,
  };
}

function asApiError(error: unknown): unknown {
  if (!(error instanceof BacklogError)) return error;
  if (error.reason === "not_found") return new ApiError(404, "not_found", error.message);
  if (error.reason === "exists") return new ApiError(409, "conflict", error.message);
  return new ApiError(
    400,
    "validation_failed",
    `${error.message}: ${error.problems.map((problem) => `${problem.field} ${problem.message}`).join("; ")}`,
    error.problems.map((problem) => ({ path: problem.field, message: problem.message })),
  );
}

export function backlogRoutes({ db }: AppDeps): ApiRouter {
  const save = async (workspaceId: number, fields: PlannedTestFields, mode: "create" | "update") => {
    try {
      return await savePlannedTest(db, workspaceId, fields, { mode, now: new Date().toISOString() });
    } catch (error) {
      throw asApiError(error);
    }
  };
  const requireTest = async (workspaceId: number, key: string) => {
    const found = await getPlannedTest(db, workspaceId, key);
    if (!found) throw new ApiError(404, "not_found", `no planned test "${key}" in this workspace`);
    return found;
  };
  const view = (test: Awaited<ReturnType<typeof requireTest>>) => ({
    ...test,
    priorOverride: test.priorOverride,
  });

  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/backlog",
        tags: ["backlog"],
        summary: "The planned tests, by key",
        request: {
          query: z.object({ status: z.enum(["planned", "running", "done"]).optional() }),
        },
        responses: {
          200: {
            description: "Planned tests",
            content: { "application/json": { schema: z.object({ items: z.array(PlannedTestSchema) }) } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => {
        const { status } = c.req.valid("query");
        const items = await listPlannedTests(
          db,
          c.get("auth").workspaceId,
          status ? { statuses: [status] } : {},
        );
        return c.json({ items: items.map(view) }, 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/backlog/{key}",
        tags: ["backlog"],
        summary: "One planned test",
        request: { params: KeyParamSchema },
        responses: {
          200: {
            description: "The planned test",
            content: { "application/json": { schema: PlannedTestSchema } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => c.json(view(await requireTest(c.get("auth").workspaceId, c.req.valid("param").key)), 200),
    )
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "post",
        path: "/backlog",
        tags: ["backlog"],
        summary: "Add a planned test (write)",
        request: {
          body: { required: true, content: { "application/json": { schema: PlannedTestBodySchema } } },
        },
        responses: {
          201: { description: "Created", content: { "application/json": { schema: PlannedTestSchema } } },
          ...errorResponses(...authenticatedErrors, 409),
        },
      }),
      async (c) => {
        const auth = requireRole(c, "write");
        const saved = await save(auth.workspaceId, toFields(c.req.valid("json")), "create");
        return c.json(view(saved.view), 201);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "put",
        path: "/backlog/{key}",
        tags: ["backlog"],
        summary: "Replace a planned test (write)",
        request: {
          params: KeyParamSchema,
          body: {
            required: true,
            content: { "application/json": { schema: PlannedTestBodySchema.omit({ key: true }) } },
          },
        },
        responses: {
          200: { description: "Replaced", content: { "application/json": { schema: PlannedTestSchema } } },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const auth = requireRole(c, "write");
        const { key } = c.req.valid("param");
        const saved = await save(auth.workspaceId, toFields({ ...c.req.valid("json"), key }), "update");
        return c.json(view(saved.view), 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "patch",
        path: "/backlog/{key}",
        tags: ["backlog"],
        summary: "Change some fields of a planned test (write)",
        request: {
          params: KeyParamSchema,
          body: { required: true, content: { "application/json": { schema: PlannedTestPatchSchema } } },
        },
        responses: {
          200: { description: "Changed", content: { "application/json": { schema: PlannedTestSchema } } },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const auth = requireRole(c, "write");
        const { key } = c.req.valid("param");
        const current = fieldsOf(await requireTest(auth.workspaceId, key));
        const patch = c.req.valid("json");
        const given = Object.fromEntries(Object.entries(patch).filter(([, value]) => value !== undefined));
        const merged: PlannedTestFields = { ...current, ...given };
        const saved = await save(auth.workspaceId, merged, "update");
        return c.json(view(saved.view), 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "delete",
        path: "/backlog/{key}",
        tags: ["backlog"],
        summary: "Remove a planned test (write)",
        request: { params: KeyParamSchema },
        responses: {
          200: {
            description: "Removed",
            content: { "application/json": { schema: z.object({ deleted: z.string() }) } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const auth = requireRole(c, "write");
        const { key } = c.req.valid("param");
        if (!(await deletePlannedTest(db, auth.workspaceId, key)))
          throw new ApiError(404, "not_found", `no planned test "${key}" in this workspace`);
        return c.json({ deleted: key }, 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "post",
        path: "/backlog/imports",
        tags: ["backlog"],
        summary: "Import planned tests from a CSV or JSON file, all or nothing (write)",
        description:
          "Send JSON `{fileName, content, dryRun}` or the CSV itself with `Content-Type: text/csv` and " +
          "`?fileName=&dryRun=`. Layout: templates/backlog-template.csv. Rows are matched by key.",
        request: {
          query: BacklogImportQuerySchema,
          body: {
            required: false,
            content: {
              "application/json": { schema: BacklogImportBodySchema },
              "text/csv": { schema: z.string() },
            },
          },
        },
        responses: {
          200: {
            description: "Applied (or a dry run)",
            content: { "application/json": { schema: BacklogImportReportSchema } },
          },
          422: {
            description: "Rejected: nothing was written; every bad row and column is listed",
            content: {
              "application/json": {
                schema: z.object({
                  error: z.object({
                    code: z.literal("unprocessable"),
                    message: z.string(),
                    issues: z.array(
                      z.object({ path: z.string(), message: z.string(), row: z.number().int().optional() }),
                    ),
                  }),
                  report: BacklogImportReportSchema,
                }),
              },
            },
          },
          ...errorResponses(...authenticatedErrors, 413),
        },
      }),
      async (c) => {
        const auth = requireRole(c, "write");
        const upload = await readUploadedFile(
          c.req.header("content-type"),
          {
            jsonBody: () => c.req.valid("json") as z.infer<typeof BacklogImportBodySchema>,
            csvQuery: () => c.req.valid("query"),
            text: () => c.req.text(),
          },
          "{fileName, content, format, dryRun}",
        );
        const imported = await importBacklog(db, {
          workspaceId: auth.workspaceId,
          tokenId: auth.tokenId,
          ...upload.file,
        });
        const report = { ...imported, errors: [...imported.errors] };
        if (report.outcome === "rejected") return c.json(rejectedImportBody(report), 422);
        return c.json(report, 200);
      },
    );
}
