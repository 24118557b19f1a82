/**
 * Puts the app on a socket. Kept apart from createApp so that tests never open ports and the
 * CLI decides the port and what to print.
 */
import type { AddressInfo } from "node:net";
import { serve } from "@hono/node-server";
import { createApp } from "./api/app.ts";
import { apiReviewRuns } from "./api/routes/review.ts";
import type { Database } from "./db/client.ts";
import { startReviewPreparer } from "./review/review-preparer.ts";

export interface RunningServer {
  /** e.g. http://localhost:8080 */
  readonly url: string;
  readonly port: number;
  close(): Promise<void>;
}

export const defaultPrepareReviewsEvery = 10;

/** Starts the HTTP server; resolves once it listens, rejects when the port cannot be bound. */
export function startServer(options: {
  db: Database;
  port: number;
  hostname?: string;
  /**
   * Seconds between the checks that prepare the default review of a workspace whose history
   * changed (default 10; 0 turns the preparation off).
   */
  prepareReviewsEvery?: number;
}): Promise<RunningServer> {
  const logError = (message: string, error: unknown) => console.error(message, error);
  const reviewRuns = apiReviewRuns(logError);
  const every = options.prepareReviewsEvery ?? defaultPrepareReviewsEvery;
  const preparer =
    every > 0
      ? startReviewPreparer({ db: options.db, runs: reviewRuns, intervalMilliseconds: every * 1000 })
      : null;
  // A write through the API (an import is one request) is prepared about 2 s after that
  // workspace's writes settle, without waiting for the periodic checks; the CLI's writes are seen
  // by those checks.
  const app = createApp(
    {
      db: options.db,
      ...(preparer ? { onHistoryWrite: (workspaceId: number) => void preparer.soon(workspaceId) } : {}),
    },
    { logError, reviewRuns },
  );
  return new Promise((resolvePromise, rejectPromise) => {
    const onError = (error: Error) => {
      preparer?.stop();
      rejectPromise(error);
    };
    const server = serve(
      { fetch: app.fetch, port: options.port, ...(options.hostname ? { hostname: options.hostname } : {}) },
      (info: AddressInfo) => {
        server.off("error", onError);
        const host = options.hostname && options.hostname !== "0.0.0.0" ? options.hostname : "localhost";
        resolvePromise({
          url: `http://${host}:${info.port}`,
          port: info.port,
          close: () => {
            preparer?.stop();
            return new Promise<void>((resolveClose, rejectClose) =>
              server.close((error) => (error ? rejectClose(error) : resolveClose())),
            );
          },
        });
      },
    );
    server.once("error", onError);
  });
}
