import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { createDb, type DatabaseHandle } from "../../src/db/client.ts";

/**
 * A temporary libSQL file database with the migrations applied (libSQL `:memory:` loses its
 * schema after the first interactive transaction, so tests use files).
 */
export async function createTestDb(): Promise<DatabaseHandle & { dispose(): void }> {
  const folder = mkdtempSync(join(tmpdir(), "plumbline-test-"));
  const handle = await createDb(`file:${join(folder, "test.db")}`);
  return {
    ...handle,
    dispose() {
      handle.close();
      rmSync(folder, { recursive: true, force: true });
    },
  };
}
