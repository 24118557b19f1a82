/**
 * The `plumbline` command line. Each command lives in src/cli/commands/<name>.ts and exports
 * `run(args: string[], io: CommandIo): Promise<number>`; this file only dispatches.
 * To add a command: write its module and add one line to `commands` below.
 */
import type { CommandIo } from "./io.ts";
import { processIo } from "./io.ts";

type CommandModule = { run(args: string[], io: CommandIo): Promise<number>; summary: string };

const commands: Record<string, () => Promise<CommandModule>> = {
  // (one line per command, keep alphabetical)
  backlog: () => import("./commands/backlog.ts"),
  calibrate: () => import("./commands/calibrate.ts"),
  demo: () => import("./commands/demo.ts"),
  design: () => import("./commands/design.ts"),
  experiments: () => import("./commands/experiments.ts"),
  fit: () => import("./commands/fit.ts"),
  forecast: () => import("./commands/forecast.ts"),
  import: () => import("./commands/import.ts"),
  review: () => import("./commands/review.ts"),
  reviews: () => import("./commands/reviews.ts"),
  risk: () => import("./commands/risk.ts"),
  serve: () => import("./commands/serve.ts"),
  size: () => import("./commands/size.ts"),
  "skew-check": () => import("./commands/skew-check.ts"),
  token: () => import("./commands/token.ts"),
  workspace: () => import("./commands/workspace.ts"),
};

function usage(summaries: [string, string][]): string {
  const width = Math.max(...summaries.map(([name]) => name.length), 8);
  return [
    "plumbline: program-level review, defaults and forecasts for a company's A/B testing history",
    "",
    "Usage: plumbline <command> [options]     (plumbline <command> --help for its options)",
    "",
    "Commands:",
    ...summaries.map(([name, summary]) => `  ${name.padEnd(width)}  ${summary}`),
    "",
    "Every command takes --json to print one JSON document on stdout.",
    "The CLI works directly on the database named by PLUMBLINE_DATABASE_URL (default file:./data/plumbline.db).",
  ].join("\n");
}

export async function main(argv: string[], io: CommandIo = processIo): Promise<number> {
  const [name, ...rest] = argv;
  if (!name || name === "--help" || name === "-h" || name === "help") {
    const summaries: [string, string][] = [];
    for (const [commandName, load] of Object.entries(commands))
      summaries.push([commandName, (await load()).summary]);
    io.out(usage(summaries));
    return 0;
  }
  const load = commands[name];
  if (!load) {
    io.err(`plumbline: unknown command "${name}". Run plumbline --help for the list.`);
    return 2;
  }
  const command = await load();
  return command.run(rest, io);
}
