/** Configuration from the environment: defaults, accepted forms, and errors that name the variable. */
import { describe, expect, it } from "vitest";
import { ConfigError, defaultDatabaseUrl, loadConfig } from "../../src/config.ts";

function configError(env: Record<string, string>): ConfigError {
  try {
    loadConfig(env);
  } catch (error) {
    if (error instanceof ConfigError) return error;
    throw error;
  }
  throw new Error(`no ConfigError for ${JSON.stringify(env)}`);
}

describe("loadConfig", () => {
  it("defaults to the embedded file database and port 8080", () => {
    expect(loadConfig({})).toEqual({
      databaseUrl: defaultDatabaseUrl,
      databaseAuthToken: undefined,
      port: 8080,
    });
    expect(defaultDatabaseUrl).toBe("file:./data/plumbline.db");
  });

  it.each([
    "file:./elsewhere/plumbline.db",
    "file:/var/lib/plumbline/history.db",
    "libsql://history-example.turso.io",
    "http://127.0.0.1:8081",
    "https://db.example.org",
    "ws://127.0.0.1:8081",
    "wss://db.example.org",
  ])("accepts PLUMBLINE_DATABASE_URL=%s", (url) => {
    expect(loadConfig({ PLUMBLINE_DATABASE_URL: url }).databaseUrl).toBe(url);
  });

  it("passes the auth token on", () => {
    const config = loadConfig({
      PLUMBLINE_DATABASE_URL: "libsql://db.example.org",
      PLUMBLINE_DATABASE_AUTH_TOKEN: "abc.def",
    });
    expect(config.databaseAuthToken).toBe("abc.def");
  });

  it.each([
    ["PLUMBLINE_DATABASE_URL", "postgres://localhost/plumbline"],
    ["PLUMBLINE_DATABASE_URL", "./data/plumbline.db"],
    ["PLUMBLINE_DATABASE_URL", "file:"],
    ["PLUMBLINE_DATABASE_URL", "libsql://"],
    ["PLUMBLINE_DATABASE_AUTH_TOKEN", "two words"],
    ["PORT", "eighty"],
    ["PORT", "0"],
    ["PORT", "65536"],
    ["PORT", "80.5"],
    ["PORT", "-1"],
  ])("refuses %s=%s with a message naming the variable", (variable, value) => {
    const error = configError({ [variable]: value });
    expect(error.variable).toBe(variable);
    expect(error.message.startsWith(`${variable}: `)).toBe(true);
  });

  it("reads PORT", () => {
    expect(loadConfig({ PORT: "3000" }).port).toBe(3000);
    expect(loadConfig({ PORT: "65535" }).port).toBe(65535);
  });
});
