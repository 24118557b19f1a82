/**
 * Writes a simulated history straight into a database (workspace, metrics, experiments, primary
 * results, realized measurements), for the review tests and the review benchmark. Rows come from
 * the demo generator's known truth (src/demo), so tests can compare a review with what was simulated.
 */
import { eq } from "drizzle-orm";
import type { Database } from "../../src/db/client.ts";
import { experiments, metrics, realizedMeasurements, results, workspaces } from "../../src/db/schema.ts";
import type { DemoResultTruth } from "../../src/demo/generate-demo.ts";

const chunkRows = 500;

export async function seedHistory(
  db: Database,
  workspaceName: string,
  rows: readonly DemoResultTruth[],
): Promise<{ workspaceId: number }> {
  const [workspace] = await db
    .insert(workspaces)
    .values({ name: workspaceName })
    .returning({ id: workspaces.id });
  if (!workspace) throw new Error("workspace not created");
  const workspaceId = workspace.id;
  const familyNames = [...new Set(rows.map((row) => row.family))];
  const metricIds = new Map<string, number>();
  for (const family of familyNames) {
    const [metric] = await db
      .insert(metrics)
      .values({ workspaceId, key: family, name: family, kind: "binary", direction: "increase", family })
      .returning({ id: metrics.id });
    metricIds.set(family, metric?.id as number);
  }
  const primary = rows.filter((row) => row.isPrimary);
  for (let start = 0; start < primary.length; start += chunkRows) {
    const chunk = primary.slice(start, start + chunkRows);
    await db.transaction(async (tx) => {
      const inserted = await tx
        .insert(experiments)
        .values(
          chunk.map((row) => ({
            workspaceId,
            key: row.key,
            name: row.name,
            team: row.team,
            startedOn: row.startedOn,
            endedOn: row.endedOn,
            decidedOn: row.endedOn,
            stoppedEarly: row.stoppedEarly,
            isAa: row.isAa,
            decision: row.decision,
          })),
        )
        .returning({ id: experiments.id });
      await tx.insert(results).values(
        chunk.map((row, index) => ({
          experimentId: inserted[index]?.id as number,
          metricId: metricIds.get(row.family) as number,
          isPrimary: true,
          input: { lift: String(row.observedLift), se: String(row.observedSe) },
          inputForm: "standard_error",
          lift: row.observedLift,
          liftSe: row.observedSe,
          srmPValue: row.srmPValue,
          srmFlagged: row.srmFlagged,
        })),
      );
      const holdouts = chunk
        .map((row, index) => ({ row, experimentId: inserted[index]?.id as number }))
        .filter(({ row }) => row.holdout !== null);
      if (holdouts.length > 0) {
        await tx.insert(realizedMeasurements).values(
          holdouts.map(({ row, experimentId }) => ({
            experimentId,
            metricId: metricIds.get(row.family) as number,
            estimate: row.holdout?.realizedLift as number,
            standardError: row.holdout?.realizedSe as number,
            method: "holdout" as const,
            measuredOn: row.holdout?.measuredOn ?? null,
          })),
        );
      }
    });
  }
  return { workspaceId };
}

export async function workspaceIdByName(db: Database, name: string): Promise<number> {
  const [row] = await db.select({ id: workspaces.id }).from(workspaces).where(eq(workspaces.name, name));
  if (!row) throw new Error(`no workspace ${name}`);
  return row.id;
}
