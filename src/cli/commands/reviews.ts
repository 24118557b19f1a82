/**
 * `plumbline reviews list|show|compare --workspace NAME`: saved program reviews (immutable
 * snapshots made with `plumbline review --save LABEL`).
 */

import { writeFileSync } from "node:fs";
import { parseArgs } from "node:util";
import { eq } from "drizzle-orm";
import { workspaces } from "../../db/schema.ts";
import { reviewCsv } from "../../report/review-csv.ts";
import { compareReviews, listReviews, SavedReviewError, showReview } from "../../review/saved-reviews.ts";
import type { CommandIo } from "../io.ts";
import { describeReview } from "./review.ts";
import { withDatabase } from "./workspace.ts";

export const summary = "list, show or compare saved program reviews";

const help = `Usage:
  plumbline reviews list --workspace NAME [--json]
  plumbline reviews show LABEL --workspace NAME [--json] [--csv OUT.csv]
  plumbline reviews compare LABEL_BEFORE LABEL_AFTER --workspace NAME [--json]

Saved reviews never change: each keeps its settings, the fingerprint of the data it read and
its results. compare lists the headline figures of both with the change, and says whether
the data or the settings differ. A label can also be given as the review's numeric id.`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: {
    values: { workspace?: string; json?: boolean; csv?: string; help?: boolean };
    positionals: string[];
  };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        workspace: { type: "string" },
        json: { type: "boolean" },
        csv: { type: "string" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    io.err(`plumbline reviews: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  const { values, positionals } = parsed;
  if (values.help) {
    io.out(help);
    return 0;
  }
  const [action, ...operands] = positionals;
  const arity: Record<string, number> = { list: 0, show: 1, compare: 2 };
  if (!action || arity[action] === undefined) {
    io.err(
      `plumbline reviews: ${action ? `unknown action "${action}"` : "missing action"}; use list, show or compare\n\n${help}`,
    );
    return 2;
  }
  if (operands.length !== arity[action]) {
    io.err(
      `plumbline reviews ${action}: expects ${arity[action]} label(s); got ${operands.length}\n\n${help}`,
    );
    return 2;
  }
  if (!values.workspace) {
    io.err(`plumbline reviews ${action}: --workspace NAME is required\n\n${help}`);
    return 2;
  }
  const workspaceName = values.workspace;
  return withDatabase(
    io,
    async (db) => {
      const [workspace] = await db.select().from(workspaces).where(eq(workspaces.name, workspaceName));
      if (!workspace) {
        io.err(`plumbline reviews: no workspace named "${workspaceName}" (see plumbline workspace list)`);
        return 1;
      }
      try {
        if (action === "list") {
          const rows = await listReviews(db, workspace.id);
          if (values.json) io.out(JSON.stringify({ workspace: workspace.name, reviews: rows }));
          else if (rows.length === 0)
            io.out(
              `No saved reviews in "${workspace.name}". Save one with: plumbline review --workspace ${workspace.name} --save LABEL`,
            );
          else
            for (const row of rows) {
              const fdr =
                row.falseDiscoveryRate === null ? "n/a" : `${(row.falseDiscoveryRate * 100).toFixed(1)} %`;
              io.out(
                `${row.label}  (id ${row.id}, ${row.createdAt}) family ${row.family}: ${row.shipped} shipped, false discovery rate ${fdr}, data ${row.dataFingerprint.slice(0, 12)}`,
              );
            }
          return 0;
        }
        if (action === "show") {
          const saved = await showReview(db, workspace.id, operands[0] as string);
          if (values.csv) writeFileSync(values.csv, reviewCsv(saved.tests));
          if (values.json) {
            io.out(
              JSON.stringify({
                workspace: workspace.name,
                label: saved.label,
                id: saved.id,
                createdAt: saved.createdAt,
                ...saved.summary,
              }),
            );
          } else {
            io.out(
              `Saved review "${saved.label}" (id ${saved.id}, ${saved.createdAt}; data ${saved.dataFingerprint})`,
            );
            io.out(describeReview(workspace.name, saved.summary));
          }
          return 0;
        }
        const before = await showReview(db, workspace.id, operands[0] as string);
        const after = await showReview(db, workspace.id, operands[1] as string);
        const comparison = compareReviews(before, after);
        const cautions = after.summary.cautions;
        if (values.json) {
          io.out(JSON.stringify({ workspace: workspace.name, ...comparison, cautions }));
          return 0;
        }
        io.out(
          `"${before.label}" -> "${after.label}": ${comparison.sameData ? "same data" : "different data"}${comparison.settingsChanged.length > 0 ? `; settings changed: ${comparison.settingsChanged.join(", ")}` : ""}`,
        );
        for (const row of comparison.figures) {
          const format = (value: number | null) =>
            value === null ? "n/a" : Number(value.toPrecision(4)).toString();
          io.out(
            `  ${row.figure.padEnd(30)} ${format(row.before).padStart(12)} -> ${format(row.after).padStart(12)}  (${row.change === null ? "n/a" : `${row.change >= 0 ? "+" : ""}${format(row.change)}`})`,
          );
        }
        for (const text of cautions) io.out(`  - ${text}`);
        return 0;
      } catch (error) {
        if (error instanceof SavedReviewError) {
          io.err(`plumbline reviews: ${error.message}`);
          return 1;
        }
        throw error;
      }
    },
    "plumbline reviews",
  );
}
