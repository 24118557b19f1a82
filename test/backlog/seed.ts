/** A workspace of the fictional retailer "Larkspur Outfitters" with two metrics, for backlog tests. */
import { metrics, workspaces } from "../../src/db/schema.ts";
import type { createTestDb } from "../helpers/db.ts";

export type TestDb = Awaited<ReturnType<typeof createTestDb>>;

export async function seedWorkspace(handle: TestDb): Promise<number> {
  const [workspace] = await handle.db.insert(workspaces).values({ name: "Larkspur Outfitters" }).returning();
  const workspaceId = workspace!.id;
  await handle.db.insert(metrics).values([
    {
      workspaceId,
      key: "order_rate",
      name: "Order rate",
      kind: "binary",
      direction: "increase",
      family: "conversion",
    },
    {
      workspaceId,
      key: "basket_value",
      name: "Basket value",
      kind: "continuous",
      direction: "increase",
      family: "revenue",
    },
  ]);
  return workspaceId;
}
