/**
 * Configuration from the environment, validated once at start so that a typo fails loudly
 * with the variable's name instead of surfacing later as a confusing database or socket error.
 *
 * - PLUMBLINE_DATABASE_URL: `file:<path>` for the embedded libSQL file database (default
 *   `file:./data/plumbline.db`), or `libsql:`, `http(s):`, `ws(s):` for a remote libSQL server.
 * - PLUMBLINE_DATABASE_AUTH_TOKEN: the remote server's auth token (optional).
 * - PORT: the HTTP port of `plumbline serve` (default 8080, an integer in 1..65535).
 */
import { createDb, type DatabaseHandle } from "./db/client.ts";

export const defaultDatabaseUrl = "file:./data/plumbline.db";
export const defaultPort = 8080;

const acceptedSchemes = ["file:", "libsql:", "http:", "https:", "ws:", "wss:"] as const;

export interface PlumblineConfig {
  readonly databaseUrl: string;
  readonly databaseAuthToken: string | undefined;
  readonly port: number;
}

/** Invalid configuration; `variable` names the environment variable at fault. */
export class ConfigError extends Error {
  readonly variable: string;
  constructor(variable: string, message: string) {
    super(`${variable}: ${message}`);
    this.name = "ConfigError";
    this.variable = variable;
  }
}

type Environment = Readonly<Record<string, string | undefined>>;

/** Reads and validates the configuration; throws ConfigError naming the first bad variable. */
export function loadConfig(env: Environment = process.env): PlumblineConfig {
  return {
    databaseUrl: parseDatabaseUrl(env["PLUMBLINE_DATABASE_URL"]),
    databaseAuthToken: parseAuthToken(env["PLUMBLINE_DATABASE_AUTH_TOKEN"]),
    port: parsePort(env["PORT"]),
  };
}

/** Opens (and migrates) the database named by the environment. */
export async function openDatabaseFromEnv(env: Environment = process.env): Promise<DatabaseHandle> {
  const config = loadConfig(env);
  return createDb(config.databaseUrl, config.databaseAuthToken);
}

function parseDatabaseUrl(raw: string | undefined): string {
  const variable = "PLUMBLINE_DATABASE_URL";
  if (raw === undefined || raw.trim() === "") return defaultDatabaseUrl;
  const value = raw.trim();
  const scheme = acceptedSchemes.find((candidate) => value.toLowerCase().startsWith(candidate));
  if (!scheme) {
    throw new ConfigError(
      variable,
      `must start with one of ${acceptedSchemes.join(", ")} (e.g. ${defaultDatabaseUrl}); got ${JSON.stringify(raw)}`,
    );
  }
  if (scheme === "file:") {
    if (value.length === scheme.length)
      throw new ConfigError(variable, `a file: URL needs a path (e.g. ${defaultDatabaseUrl}); got "file:"`);
    return value;
  }
  try {
    const parsed = new URL(value);
    if (!parsed.hostname) throw new Error("no host");
  } catch {
    throw new ConfigError(
      variable,
      `must be a valid URL with a host (e.g. libsql://db.example.org); got ${JSON.stringify(raw)}`,
    );
  }
  return value;
}

function parseAuthToken(raw: string | undefined): string | undefined {
  if (raw === undefined || raw === "") return undefined;
  if (raw.trim() !== raw || /\s/.test(raw))
    throw new ConfigError("PLUMBLINE_DATABASE_AUTH_TOKEN", "must not contain whitespace");
  return raw;
}

function parsePort(raw: string | undefined): number {
  if (raw === undefined || raw.trim() === "") return defaultPort;
  const value = raw.trim();
  const port = /^\d+$/.test(value) ? Number(value) : Number.NaN;
  if (!Number.isInteger(port) || port < 1 || port > 65535)
    throw new ConfigError("PORT", `must be an integer from 1 to 65535; got ${JSON.stringify(raw)}`);
  return port;
}
