/**
 * What the import routes (history, realized measurements, backlog) share: a file arrives either
 * as JSON `{ fileName?, content, format?, dryRun? }` or as a text/csv body with `?fileName=&dryRun=`,
 * and a rejected import answers 422 with the error envelope plus the full report.
 */
import { ApiError } from "./errors.ts";

export interface UploadedFile {
  readonly fileName: string | null;
  readonly content: string;
  readonly format?: "csv" | "json";
  readonly dryRun: boolean;
}

interface JsonUpload {
  readonly fileName?: string | undefined;
  readonly content: string;
  readonly format?: "csv" | "json" | undefined;
  readonly dryRun?: boolean | undefined;
}

interface CsvUploadQuery {
  readonly fileName?: string | undefined;
  readonly dryRun?: boolean | undefined;
}

/**
 * Reads the uploaded file by its Content-Type. `jsonBody` and `csvQuery` give the already
 * validated JSON body and query; `jsonShape` names the JSON fields in the 400 message.
 */
export async function readUploadedFile<Body extends JsonUpload, Query extends CsvUploadQuery>(
  contentTypeHeader: string | undefined,
  request: { jsonBody: () => Body; csvQuery: () => Query; text: () => Promise<string> },
  jsonShape: string,
): Promise<{ file: UploadedFile; body?: Body; query?: Query }> {
  const contentType = (contentTypeHeader ?? "").toLowerCase();
  if (contentType.startsWith("application/json")) {
    const body = request.jsonBody();
    return {
      file: {
        fileName: body.fileName ?? null,
        content: body.content,
        dryRun: body.dryRun ?? false,
        ...(body.format ? { format: body.format } : {}),
      },
      body,
    };
  }
  if (contentType.startsWith("text/csv")) {
    const query = request.csvQuery();
    const content = await request.text();
    if (content.trim() === "")
      throw new ApiError(400, "validation_failed", "the CSV body is empty", [
        { path: "body", message: "must contain the CSV file" },
      ]);
    return {
      file: { fileName: query.fileName ?? null, content, format: "csv", dryRun: query.dryRun ?? false },
      query,
    };
  }
  throw new ApiError(
    400,
    "bad_request",
    `send the file as Content-Type: application/json (${jsonShape}) or text/csv`,
  );
}

/** The 422 body of a rejected import: the envelope, one issue a row error, and the report. */
export function rejectedImportBody<
  Report extends { errors: readonly { row: number; column: string | null; message: string }[] },
>(report: Report) {
  const issues = report.errors.map((error) => ({
    path: error.column ?? "",
    message: error.message,
    row: error.row,
  }));
  const message = `import rejected: ${issues.length} error${issues.length === 1 ? "" : "s"}; nothing was written`;
  return { error: { code: "unprocessable" as const, message, issues }, report };
}
