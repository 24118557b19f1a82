import { afterAll, describe, expect, it } from "vitest";
import { createTestDb } from "../helpers/db.ts";

describe("migrations", () => {
  const handles: Awaited<ReturnType<typeof createTestDb>>[] = [];
  afterAll(() => {
    for (const handle of handles) handle.dispose();
  });

  it("apply to a new file database and create every table", async () => {
    const handle = await createTestDb();
    handles.push(handle);
    const tables = await handle.client.execute("SELECT name FROM sqlite_master WHERE type = 'table'");
    const names = tables.rows.map((row) => String(row.name));
    for (const table of ["workspaces", "api_tokens", "metrics", "experiments", "results", "imports"]) {
      expect(names).toContain(table);
    }
  });
});
