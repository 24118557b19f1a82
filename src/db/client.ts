import { mkdirSync } from "node:fs";
import { dirname, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { type Client, createClient } from "@libsql/client";
import { drizzle, type LibSQLDatabase } from "drizzle-orm/libsql";
import { migrate } from "drizzle-orm/libsql/migrator";
import * as schema from "./schema.ts";

export type Database = LibSQLDatabase<typeof schema>;

export interface DatabaseHandle {
  readonly db: Database;
  readonly client: Client;
  close(): void;
}

const migrationsFolder = resolve(dirname(fileURLToPath(import.meta.url)), "../../migrations");

/**
 * Opens the database named by `url` (a `file:` path for the embedded libSQL database, or a
 * `libsql://` / `http(s)://` URL of a remote libSQL server) and applies pending migrations.
 */
export async function createDb(url: string, authToken?: string): Promise<DatabaseHandle> {
  if (url.startsWith("file:")) {
    const path = url.slice("file:".length);
    if (path && path !== ":memory:") mkdirSync(dirname(resolve(path)), { recursive: true });
  }
  const client = createClient(authToken ? { url, authToken } : { url });
  if (url.startsWith("file:")) {
    // Foreign keys are off by default in SQLite; WAL lets the CLI read while the server writes.
    await client.execute("PRAGMA foreign_keys = ON");
    await client.execute("PRAGMA journal_mode = WAL").catch(() => undefined);
    await client.execute("PRAGMA busy_timeout = 5000");
  }
  const db = drizzle(client, { schema });
  await migrate(db, { migrationsFolder });
  return { db, client, close: () => client.close() };
}
