/**
 * `plumbline demo [--seed S] [--json]`: creates or refreshes the demo workspace (an invented shop's
 * three years of A/B tests, generated from a known truth; docs/demo.md) on the database named by
 * PLUMBLINE_DATABASE_URL, and prints the workspace, what was imported and a fresh read token.
 */
import { parseArgs } from "node:util";
import { ConfigError, openDatabaseFromEnv } from "../../config.ts";
import { DemoImportError, loadDemoWorkspace } from "../../demo/load-demo.ts";
import type { CommandIo } from "../io.ts";

export const summary =
  "create or refresh the demo workspace (invented data with a known truth) and print a token";

const help = `Usage: plumbline demo [--seed S] [--json]

Creates the workspace "demo", or refreshes it (its experiments are deleted and imported again),
with about three years of invented A/B tests of a fictional bicycle-parts shop, simulated from a
known distribution of true effects (docs/demo.md). Prints the counts and a fresh read token.

  --seed S   seed of the simulation (a whole number; default 20260930): same seed, same data
  --json     print one JSON document {workspace, seed, token, adminToken?, counts, imports}`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let values: { seed?: string; json?: boolean; help?: boolean };
  try {
    ({ values } = parseArgs({
      args,
      strict: true,
      allowPositionals: false,
      options: { seed: { type: "string" }, json: { type: "boolean" }, help: { type: "boolean", short: "h" } },
    }));
  } catch (error) {
    io.err(`plumbline demo: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  if (values.help) {
    io.out(help);
    return 0;
  }
  let seed: number | undefined;
  if (values.seed !== undefined) {
    seed = Number(values.seed);
    // createRandom keeps 32 bits of the seed, so larger seeds would silently collide.
    if (!/^-?\d+$/.test(values.seed.trim()) || !Number.isSafeInteger(seed) || Math.abs(seed) > 2 ** 31 - 1) {
      io.err(
        `plumbline demo: --seed must be a whole number between -2147483647 and 2147483647; got "${values.seed}"`,
      );
      return 2;
    }
  }
  let handle: Awaited<ReturnType<typeof openDatabaseFromEnv>>;
  try {
    handle = await openDatabaseFromEnv();
  } catch (error) {
    if (error instanceof ConfigError) {
      io.err(`plumbline demo: invalid configuration: ${error.message}`);
      return 2;
    }
    throw error;
  }
  try {
    io.progress("generating and importing the demo workspace...");
    const loaded = await loadDemoWorkspace(handle.db, seed === undefined ? {} : { seed });
    const { truth } = loaded.demo;
    const imports = {
      history: pickCounts(loaded.history),
      realized: pickCounts(loaded.realized),
    };
    if (values.json) {
      io.out(
        JSON.stringify({
          workspace: { id: loaded.workspace.id, name: loaded.workspace.name },
          created: loaded.created,
          seed: truth.parameters.seed,
          company: truth.parameters.company,
          token: loaded.token,
          ...(loaded.adminToken ? { adminToken: loaded.adminToken } : {}),
          counts: truth.counts,
          imports,
          note: "Invented data of a fictional company, generated for demonstration; docs/demo.md gives its known truth.",
        }),
      );
    } else {
      const counts = truth.counts;
      io.out(
        `${loaded.created ? "Created" : "Refreshed"} workspace "${loaded.workspace.name}" (id ${loaded.workspace.id}): ${truth.parameters.company.name}, ${truth.parameters.company.product} (invented; seed ${truth.parameters.seed}).`,
      );
      io.out(
        `  ${counts.experiments} experiments (${counts.results} results) by ${Object.keys(counts.teams).length} teams: ${Object.entries(
          counts.teams,
        )
          .map(([team, count]) => `${team} ${count}`)
          .join(", ")}`,
      );
      io.out(
        `  decisions: ${counts.decisions.shipped} shipped, ${counts.decisions.not_shipped} not shipped, ${counts.decisions.iterate} iterate, ${counts.decisions.pending} pending`,
      );
      io.out(
        `  ${counts.aaTests} A/A tests, ${counts.stoppedEarly} stopped early, ${counts.sampleRatioMismatches} sample ratio mismatches, ${counts.holdouts} holdout measurements`,
      );
      io.out(
        `  imported: history ${imports.history.created} created / ${imports.history.updated} updated / ${imports.history.unchanged} unchanged; realized ${imports.realized.created} created`,
      );
      io.out(`Read token (shown once; only its hash is stored): ${loaded.token}`);
      if (loaded.adminToken) io.out(`Admin token (shown once): ${loaded.adminToken}`);
    }
    return 0;
  } catch (error) {
    if (error instanceof DemoImportError) {
      io.err(`plumbline demo: ${error.message}`);
      return 1;
    }
    throw error;
  } finally {
    handle.close();
  }
}

function pickCounts(report: {
  created: number;
  updated: number;
  unchanged: number;
  notes: readonly unknown[];
}) {
  return {
    created: report.created,
    updated: report.updated,
    unchanged: report.unchanged,
    notes: report.notes.length,
  };
}
