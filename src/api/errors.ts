/**
 * The one error envelope of the API: `{ error: { code, message, issues? } }`.
 * Route code throws ApiError; the app's onError turns it (and StatsInputError, and zod
 * validation failures) into the envelope with an explicit status.
 */
export interface ErrorIssue {
  /** The field (or, for imports, the column) the issue is about. */
  readonly path: string;
  readonly message: string;
  /** For imports: the 1-based row number in the file (the header is row 1). */
  readonly row?: number;
}

export type ErrorCode =
  | "bad_request"
  | "validation_failed"
  | "unauthorized"
  | "forbidden"
  | "not_found"
  | "conflict"
  | "payload_too_large"
  | "unprocessable"
  | "internal";

export class ApiError extends Error {
  readonly status: 400 | 401 | 403 | 404 | 409 | 413 | 422 | 500;
  readonly code: ErrorCode;
  readonly issues: readonly ErrorIssue[] | undefined;
  constructor(status: ApiError["status"], code: ErrorCode, message: string, issues?: readonly ErrorIssue[]) {
    super(message);
    this.name = "ApiError";
    this.status = status;
    this.code = code;
    this.issues = issues;
  }
}

export function errorBody(code: ErrorCode, message: string, issues?: readonly ErrorIssue[]) {
  return { error: issues ? { code, message, issues } : { code, message } };
}
