/**
 * `plumbline serve [--port N] [--demo]`: starts the HTTP API on the database named by
 * PLUMBLINE_DATABASE_URL. With --demo it first creates or refreshes the demo workspace and prints
 * a read token for it, so that a newcomer has something to look at straight away.
 */
import { parseArgs } from "node:util";
import { ConfigError, loadConfig } from "../../config.ts";
import { createDb } from "../../db/client.ts";
import { loadDemoWorkspace } from "../../demo/load-demo.ts";
import { defaultPrepareReviewsEvery, startServer } from "../../server.ts";
import type { CommandIo } from "../io.ts";

export const summary = "start the HTTP API (--demo: load the demo workspace first and print a token)";

const help = `Usage: plumbline serve [--port N] [--host H] [--demo] [--prepare-reviews-every S] [--json]

Starts the HTTP API on the database named by PLUMBLINE_DATABASE_URL
(default file:./data/plumbline.db) and keeps running until interrupted.

  --port N   port to listen on (default: PORT, else 8080)
  --host H   address to bind (default: all interfaces)
  --demo     create or refresh the demo workspace first and print a read token for it
  --prepare-reviews-every S
             seconds between the checks that compute, in the background, the default
             review of every metric family of a workspace whose history changed, so that
             the review page opens from the cache (default ${defaultPrepareReviewsEvery}); writes through
             the API are prepared 2 s after they settle; 0 turns all of it off
  --json     print one JSON document {url, workspace?, token?} once listening`;

/** Resolves when the process is asked to stop; tests pass their own. */
export interface ServeControl {
  readonly stopped: Promise<void>;
}

export async function run(args: string[], io: CommandIo, control?: ServeControl): Promise<number> {
  let values: {
    port?: string;
    host?: string;
    demo?: boolean;
    json?: boolean;
    help?: boolean;
    "prepare-reviews-every"?: string;
  };
  try {
    ({ values } = parseArgs({
      args,
      strict: true,
      allowPositionals: false,
      options: {
        port: { type: "string" },
        host: { type: "string" },
        demo: { type: "boolean" },
        "prepare-reviews-every": { type: "string" },
        json: { type: "boolean" },
        help: { type: "boolean", short: "h" },
      },
    }));
  } catch (error) {
    io.err(`plumbline serve: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  if (values.help) {
    io.out(help);
    return 0;
  }

  const prepareText = values["prepare-reviews-every"];
  const prepareReviewsEvery = prepareText === undefined ? defaultPrepareReviewsEvery : Number(prepareText);
  if (!Number.isFinite(prepareReviewsEvery) || prepareReviewsEvery < 0 || prepareText?.trim() === "") {
    io.err(
      `plumbline serve: --prepare-reviews-every must be a number of seconds, 0 or more (0 turns it off); got ${JSON.stringify(prepareText)}`,
    );
    return 2;
  }

  let config: ReturnType<typeof loadConfig>;
  try {
    config = loadConfig(values.port !== undefined ? { ...process.env, PORT: values.port } : process.env);
  } catch (error) {
    if (error instanceof ConfigError) {
      const message =
        values.port !== undefined && error.variable === "PORT"
          ? error.message.replace(/^PORT/, "--port")
          : error.message;
      io.err(`plumbline serve: invalid configuration: ${message}`);
      return 2;
    }
    throw error;
  }

  let handle: Awaited<ReturnType<typeof createDb>>;
  try {
    handle = await createDb(config.databaseUrl, config.databaseAuthToken);
  } catch (error) {
    io.err(`plumbline serve: cannot open the database ${config.databaseUrl}: ${(error as Error).message}`);
    return 1;
  }
  let demo: { workspaceName: string; token: string } | undefined;
  if (values.demo) {
    io.progress("loading the demo workspace...");
    const loaded = await loadDemoWorkspace(handle.db);
    demo = { workspaceName: loaded.workspace.name, token: loaded.token };
  }

  let server: Awaited<ReturnType<typeof startServer>>;
  try {
    server = await startServer({
      db: handle.db,
      port: config.port,
      prepareReviewsEvery,
      ...(values.host ? { hostname: values.host } : {}),
    });
  } catch (error) {
    handle.close();
    io.err(`plumbline serve: cannot listen on port ${config.port}: ${(error as Error).message}`);
    return 1;
  }

  if (values.json) {
    io.out(
      JSON.stringify(
        demo ? { url: server.url, workspace: demo.workspaceName, token: demo.token } : { url: server.url },
      ),
    );
  } else {
    io.out(`plumbline is listening on ${server.url}`);
    io.out(`  API reference: ${server.url}/api/reference`);
    if (demo) {
      io.out(`  demo workspace: ${demo.workspaceName}`);
      io.out(`  read token (shown once): ${demo.token}`);
      io.out(
        `  try: curl -H "Authorization: Bearer ${demo.token}" "${server.url}/api/v1/experiments?limit=5"`,
      );
    } else {
      io.out("  create a workspace and its admin token with: plumbline workspace create NAME");
    }
    io.out("Press Ctrl+C to stop.");
  }

  await (control?.stopped ?? untilInterrupted());
  await server.close();
  handle.close();
  return 0;
}

function untilInterrupted(): Promise<void> {
  return new Promise((resolvePromise) => {
    const stop = () => {
      process.off("SIGINT", stop);
      process.off("SIGTERM", stop);
      resolvePromise();
    };
    process.on("SIGINT", stop);
    process.on("SIGTERM", stop);
  });
}
