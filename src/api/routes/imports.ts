/**
 * Imports through the API: a results or realized-measurements file (CSV or JSON) is checked as a
 * whole and written all or nothing; the report lists every bad row at once. Two ways to send it:
 * - `Content-Type: application/json` with `{ fileName?, content, kind?, format?, dryRun? }`;
 * - `Content-Type: text/csv` with the file itself as the body and `?fileName=&kind=&dryRun=`.
 * A rejected import answers 422 with the error envelope (one issue per bad cell) and the report.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { and, count, desc, eq } from "drizzle-orm";
import { imports } from "../../db/schema.ts";
import { type ImportRequest, importFile } from "../../import/import-file.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses, PaginationQuerySchema, pageSchema } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";
import { readUploadedFile, rejectedImportBody } from "../uploaded-file.ts";

const KindSchema = z.enum(["results", "realized"]).openapi({
  description: "results: the canonical results layout; realized: realized measurements after launch",
});

const ImportBodySchema = z
  .object({
    fileName: z.string().trim().min(1).max(255).optional().openapi({ example: "history-2024.csv" }),
    content: z.string().min(1).openapi({ description: "The whole file, as text" }),
    kind: KindSchema.default("results"),
    format: z
      .enum(["csv", "json"])
      .optional()
      .openapi({ description: "Default: from fileName, else from content" }),
    dryRun: z.boolean().default(false).openapi({ description: "Check and report, write nothing" }),
  })
  .openapi("ImportRequest");

const ImportQuerySchema = z.object({
  fileName: z.string().trim().min(1).max(255).optional().openapi({ description: "For a text/csv body" }),
  kind: KindSchema.optional().openapi({ description: "For a text/csv body (default results)" }),
  dryRun: z
    .enum(["true", "false"])
    .transform((text) => text === "true")
    .optional()
    .openapi({ description: "For a text/csv body (default false)" }),
});

const RowErrorSchema = z.object({
  row: z.number().int().openapi({ description: "1-based; in CSV the header is row 1; 0 = the whole file" }),
  column: z.string().nullable(),
  message: z.string(),
});

export const ImportReportSchema = z
  .object({
    importId: z.number().int(),
    outcome: z.enum(["applied", "rejected", "dry_run"]),
    rows: z.number().int(),
    created: z.number().int(),
    updated: z.number().int(),
    unchanged: z.number().int(),
    errors: z.array(RowErrorSchema),
    notes: z.array(z.object({ row: z.number().int(), column: z.string(), message: z.string() })),
  })
  .openapi("ImportReport");

const RejectedImportSchema = z
  .object({
    error: z.object({
      code: z.literal("unprocessable"),
      message: z.string(),
      issues: z.array(z.object({ path: z.string(), message: z.string(), row: z.number().int().optional() })),
    }),
    report: ImportReportSchema,
  })
  .openapi("RejectedImport");

export const ImportLogEntrySchema = z
  .object({
    id: z.number().int(),
    kind: z.enum(["results", "realized", "backlog"]),
    fileName: z.string().nullable(),
    contentHash: z.string().openapi({ description: "SHA-256 of the file content" }),
    tokenId: z.number().int().nullable().openapi({ description: "null when run from the command line" }),
    dryRun: z.boolean(),
    rowCount: z.number().int(),
    created: z.number().int(),
    updated: z.number().int(),
    unchanged: z.number().int(),
    outcome: z.enum(["applied", "rejected", "dry_run"]),
    errors: z.array(RowErrorSchema),
    createdAt: z.string(),
  })
  .openapi("ImportLogEntry");

function toLogEntry(row: typeof imports.$inferSelect): z.infer<typeof ImportLogEntrySchema> {
  return {
    id: row.id,
    kind: row.kind,
    fileName: row.fileName,
    contentHash: row.contentHash,
    tokenId: row.tokenId,
    dryRun: row.dryRun,
    rowCount: row.rowCount,
    created: row.created,
    updated: row.updated,
    unchanged: row.unchanged,
    outcome: row.outcome,
    errors: row.errors,
    createdAt: row.createdAt,
  };
}

export function importsRoutes({ db, onHistoryWrite }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "post",
        path: "/imports",
        tags: ["imports"],
        summary: "Import a results or realized-measurements file, all or nothing (write)",
        description:
          "Send JSON `{fileName, content, kind, dryRun}`, or the CSV itself with `Content-Type: text/csv` " +
          "and `?fileName=&kind=&dryRun=`. Importing the same file again changes nothing; an edited row " +
          "updates its record. A file with any bad row writes nothing and answers 422 with every error.",
        request: {
          query: ImportQuerySchema,
          body: {
            // Not "required": a required JSON body would make the JSON validator refuse text/csv bodies.
            required: false,
            content: {
              "application/json": { schema: ImportBodySchema },
              "text/csv": { schema: z.string().openapi({ description: "The CSV file itself" }) },
            },
          },
        },
        responses: {
          200: {
            description: "Applied (or, for a dry run, what would be applied)",
            content: { "application/json": { schema: ImportReportSchema } },
          },
          422: {
            description: "Rejected: nothing was written; the report lists every error",
            content: { "application/json": { schema: RejectedImportSchema } },
          },
          ...errorResponses(...authenticatedErrors, 413),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const upload = await readUploadedFile(
          c.req.header("content-type"),
          {
            // The text/csv schema is documentation only; a JSON body has been validated as ImportBodySchema.
            jsonBody: () => c.req.valid("json") as z.infer<typeof ImportBodySchema>,
            csvQuery: () => c.req.valid("query"),
            text: () => c.req.text(),
          },
          "{fileName, content, kind, dryRun}",
        );
        const request: ImportRequest = {
          workspaceId: auth.workspaceId,
          tokenId: auth.tokenId,
          kind: upload.body?.kind ?? upload.query?.kind ?? "results",
          ...upload.file,
        };
        const imported = await importFile(db, request);
        const report = { ...imported, errors: [...imported.errors], notes: [...imported.notes] };
        if (report.outcome === "rejected") return c.json(rejectedImportBody(report), 422);
        if (report.outcome === "applied") onHistoryWrite?.(auth.workspaceId);
        return c.json(report, 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/imports",
        tags: ["imports"],
        summary: "The import log, newest first (every import is logged, rejected ones too)",
        request: { query: PaginationQuerySchema },
        responses: {
          200: {
            description: "A page of the log",
            content: { "application/json": { schema: pageSchema(ImportLogEntrySchema) } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => {
        const query = c.req.valid("query");
        const where = eq(imports.workspaceId, c.get("auth").workspaceId);
        const [rows, totals] = await Promise.all([
          db
            .select()
            .from(imports)
            .where(where)
            .orderBy(desc(imports.id))
            .limit(query.limit)
            .offset(query.offset),
          db.select({ n: count() }).from(imports).where(where),
        ]);
        return c.json(
          { items: rows.map(toLogEntry), total: totals[0]?.n ?? 0, limit: query.limit, offset: query.offset },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/imports/{id}",
        tags: ["imports"],
        summary: "One entry of the import log",
        request: {
          params: z.object({
            id: z.coerce
              .number()
              .int()
              .positive()
              .openapi({ param: { name: "id", in: "path" }, example: 1 }),
          }),
        },
        responses: {
          200: {
            description: "The entry",
            content: { "application/json": { schema: ImportLogEntrySchema } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { id } = c.req.valid("param");
        const [row] = await db
          .select()
          .from(imports)
          .where(and(eq(imports.id, id), eq(imports.workspaceId, c.get("auth").workspaceId)))
          .limit(1);
        if (!row) throw new ApiError(404, "not_found", `no import ${id} in this workspace`);
        return c.json(toLogEntry(row), 200);
      },
    );
}
