/**
 * Schemas shared by the route modules: the error envelope (documented on every route so that
 * the OpenAPI document shows it), pagination, and the standard error responses.
 */
import { z } from "@hono/zod-openapi";

export const ErrorEnvelopeSchema = z
  .object({
    error: z.object({
      code: z.string().openapi({ example: "validation_failed" }),
      message: z.string().openapi({ example: "limit: must be at most 500" }),
      issues: z
        .array(
          z.object({
            path: z.string().openapi({ description: "The field (for imports: the column) at fault" }),
            message: z.string(),
            row: z.number().int().optional().openapi({ description: "For imports: 1-based row, header = 1" }),
          }),
        )
        .optional(),
    }),
  })
  .openapi("ErrorEnvelope");

const errorDescriptions = {
  400: "The request is malformed or a field is invalid (issues name each field)",
  401: "Missing, malformed, unknown or revoked token",
  403: "The token's role does not allow this",
  404: "No such resource in the token's workspace",
  409: "Conflicts with the current state",
  413: "The request body is too large",
  422: "Understood but refused (e.g. an import with bad rows; issues name them)",
} as const;

type ErrorStatus = keyof typeof errorDescriptions;

/** The error responses of a route, for its createRoute `responses`. */
export function errorResponses<S extends ErrorStatus>(...statuses: S[]) {
  const responses = {} as Record<
    S,
    { description: string; content: { "application/json": { schema: typeof ErrorEnvelopeSchema } } }
  >;
  for (const status of statuses)
    responses[status] = {
      description: errorDescriptions[status],
      content: { "application/json": { schema: ErrorEnvelopeSchema } },
    };
  return responses;
}

/** Every authenticated route can answer 400 (validation), 401 and 403. */
export const authenticatedErrors = [400, 401, 403] as const;

export const maximumPageSize = 500;

export const PaginationQuerySchema = z.object({
  limit: z.coerce
    .number()
    .int()
    .min(1)
    .max(maximumPageSize)
    .default(50)
    .openapi({ description: `Page size, 1 to ${maximumPageSize}`, example: 50 }),
  offset: z.coerce.number().int().min(0).default(0).openapi({ description: "Items to skip", example: 0 }),
});

export function pageSchema<T extends z.ZodType>(item: T) {
  return z.object({
    items: z.array(item),
    total: z.number().int().openapi({ description: "Matching items across all pages" }),
    limit: z.number().int(),
    offset: z.number().int(),
  });
}

/** YYYY-MM-DD, a real calendar date. */
export const IsoDateSchema = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, "must be a date written YYYY-MM-DD")
  .refine((text) => {
    const date = new Date(`${text}T00:00:00Z`);
    return !Number.isNaN(date.getTime()) && date.toISOString().slice(0, 10) === text;
  }, "must be a real calendar date")
  .openapi({ example: "2024-03-01" });
