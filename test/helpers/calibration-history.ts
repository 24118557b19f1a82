/**
 * An invented testing history for the calibration tests: 40 primary results of metric family
 * "signup" (true lifts drawn from a seeded mixture, estimates with their noise), plus an A/A test
 * and an SRM-flagged result that the fit must leave out. Planned alpha 0.05 and 30,000 users.
 */
import { issueToken } from "../../src/api/tokens.ts";
import type { Database } from "../../src/db/client.ts";
import { experiments, metrics, results } from "../../src/db/schema.ts";
import { createRandom } from "../../src/stats/random.ts";
import { createWorkspace } from "../../src/workspaces.ts";

export async function seedCalibrationHistory(
  db: Database,
  name: string,
): Promise<{ workspaceId: number; token: string }> {
  const { workspace } = await createWorkspace(db, name);
  const token = await issueToken(db, { workspaceId: workspace.id, role: "read", label: "calibration" });
  const [metric] = await db
    .insert(metrics)
    .values({
      workspaceId: workspace.id,
      key: "signup",
      name: "Signup rate",
      kind: "binary",
      direction: "increase",
      family: "signup",
    })
    .returning();
  const random = createRandom(42);
  for (let i = 0; i < 42; i++) {
    const theta = random.uniform() < 0.6 ? 0 : 0.02 * random.normal();
    const s = 0.008 + 0.004 * random.uniform();
    const [experiment] = await db
      .insert(experiments)
      .values({
        workspaceId: workspace.id,
        key: `lumen-${i}`,
        name: `Lumen idea ${i}`,
        plannedAlpha: 0.05,
        plannedSampleSize: 30_000,
        plannedSplit: [0.5, 0.5],
        isAa: i === 40,
        decision: "not_shipped",
      })
      .returning();
    await db.insert(results).values({
      experimentId: experiment!.id,
      metricId: metric!.id,
      isPrimary: true,
      input: {},
      inputForm: "standard_error",
      lift: i >= 40 ? 0.5 : theta + s * random.normal(),
      liftSe: s,
      srmFlagged: i === 41,
    });
  }
  return { workspaceId: workspace.id, token: token.token };
}
