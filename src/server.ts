/**
 * Puts the app on a socket. Kept apart from createApp so that tests never open ports and the
 * CLI decides the port and what to print.
 */
import type { AddressInfo } from "node:net";
import { serve } from "@hono/node-server";
import { createApp } from "./api/app.ts";
import type { Database } from "./db/client.ts";

export interface RunningServer {
  /** e.g. http://localhost:8080 */
  readonly url: string;
  readonly port: number;
  close(): Promise<void>;
}

/** Starts the HTTP server; resolves once it listens, rejects when the port cannot be bound. */
export function startServer(options: {
  db: Database;
  port: number;
  hostname?: string;
}): Promise<RunningServer> {
  const app = createApp({ db: options.db });
  return new Promise((resolvePromise, rejectPromise) => {
    const server = serve(
      { fetch: app.fetch, port: options.port, ...(options.hostname ? { hostname: options.hostname } : {}) },
      (info: AddressInfo) => {
        server.off("error", rejectPromise);
        const host = options.hostname && options.hostname !== "0.0.0.0" ? options.hostname : "localhost";
        resolvePromise({
          url: `http://${host}:${info.port}`,
          port: info.port,
          close: () =>
            new Promise<void>((resolveClose, rejectClose) =>
              server.close((error) => (error ? rejectClose(error) : resolveClose())),
            ),
        });
      },
    );
    server.once("error", rejectPromise);
  });
}
