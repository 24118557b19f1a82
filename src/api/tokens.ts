/**
 * API tokens: `plb_` followed by 32 random bytes in base64url (256 bits, so guessing is not a
 * concern and a constant-time lookup by hash is enough). Only the SHA-256 of a token is stored;
 * the token itself is returned once, at creation, and never again.
 */
import { createHash, randomBytes } from "node:crypto";
import { and, desc, eq, isNull } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { apiTokens, workspaces } from "../db/schema.ts";
import type { TokenRole } from "./context.ts";

export const tokenPrefix = "plb_";
/** How many leading characters of a token are kept to tell tokens apart in listings. */
const shownPrefixLength = tokenPrefix.length + 6;
const tokenPattern = /^plb_[A-Za-z0-9_-]{43}$/;

export const tokenRoles: readonly TokenRole[] = ["read", "write", "admin"];

/** A token as listed: never the secret nor its hash. */
export interface TokenSummary {
  readonly id: number;
  readonly workspaceId: number;
  readonly label: string | null;
  readonly prefix: string;
  readonly role: TokenRole;
  readonly createdAt: string;
  readonly lastUsedAt: string | null;
  readonly revokedAt: string | null;
}

export interface IssuedToken {
  /** The secret, shown once. */
  readonly token: string;
  readonly summary: TokenSummary;
}

export interface ResolvedToken {
  readonly tokenId: number;
  readonly lastUsedAt: string | null;
  readonly role: TokenRole;
  readonly workspaceId: number;
  readonly workspaceName: string;
}

/** The database or a transaction on it (tokens are issued inside workspace creation). */
export type Queryable = Database | Parameters<Parameters<Database["transaction"]>[0]>[0];

export function generateToken(): string {
  return tokenPrefix + randomBytes(32).toString("base64url");
}

export function hashToken(token: string): string {
  return createHash("sha256").update(token, "utf8").digest("hex");
}

/** Whether `text` has the shape of a plumbline token (cheap check before a database lookup). */
export function isWellFormedToken(text: string): boolean {
  return tokenPattern.test(text);
}

export async function issueToken(
  db: Queryable,
  options: { workspaceId: number; role: TokenRole; label?: string | null },
): Promise<IssuedToken> {
  const token = generateToken();
  const [row] = await db
    .insert(apiTokens)
    .values({
      workspaceId: options.workspaceId,
      role: options.role,
      label: options.label ?? null,
      tokenHash: hashToken(token),
      prefix: token.slice(0, shownPrefixLength),
    })
    .returning();
  if (!row) throw new Error("token insert returned no row");
  return { token, summary: toSummary(row) };
}

/** The workspace and role of an active token; undefined when unknown or revoked. */
export async function resolveToken(db: Database, token: string): Promise<ResolvedToken | undefined> {
  if (!isWellFormedToken(token)) return undefined;
  const [row] = await db
    .select({
      tokenId: apiTokens.id,
      role: apiTokens.role,
      revokedAt: apiTokens.revokedAt,
      lastUsedAt: apiTokens.lastUsedAt,
      workspaceId: workspaces.id,
      workspaceName: workspaces.name,
    })
    .from(apiTokens)
    .innerJoin(workspaces, eq(workspaces.id, apiTokens.workspaceId))
    .where(eq(apiTokens.tokenHash, hashToken(token)))
    .limit(1);
  if (!row || row.revokedAt !== null) return undefined;
  return {
    tokenId: row.tokenId,
    lastUsedAt: row.lastUsedAt,
    role: row.role,
    workspaceId: row.workspaceId,
    workspaceName: row.workspaceName,
  };
}

/** How stale the last-used time may get: a write on every request would compete with imports. */
export const lastUsedResolutionMs = 60_000;

/** Whether the last-used time is older than its resolution (or unset) at `now`. */
export function lastUsedIsStale(lastUsedAt: string | null, now: Date): boolean {
  if (lastUsedAt === null) return true;
  const last = Date.parse(lastUsedAt);
  return !Number.isFinite(last) || now.getTime() - last >= lastUsedResolutionMs;
}

/** Records that a token was just used (to the minute: see lastUsedResolutionMs). */
export async function touchToken(db: Database, tokenId: number, now: Date = new Date()): Promise<void> {
  await db.update(apiTokens).set({ lastUsedAt: now.toISOString() }).where(eq(apiTokens.id, tokenId));
}

export async function listTokens(db: Database, workspaceId: number): Promise<TokenSummary[]> {
  const rows = await db
    .select()
    .from(apiTokens)
    .where(eq(apiTokens.workspaceId, workspaceId))
    .orderBy(desc(apiTokens.id));
  return rows.map(toSummary);
}

export async function findToken(
  db: Database,
  workspaceId: number,
  tokenId: number,
): Promise<TokenSummary | undefined> {
  const [row] = await db
    .select()
    .from(apiTokens)
    .where(and(eq(apiTokens.workspaceId, workspaceId), eq(apiTokens.id, tokenId)))
    .limit(1);
  return row ? toSummary(row) : undefined;
}

/**
 * Revokes a token of the workspace. Returns the token as it now is, or undefined when the
 * workspace has no such token. Revoking twice keeps the first revocation time.
 */
export async function revokeToken(
  db: Database,
  workspaceId: number,
  tokenId: number,
  now: Date = new Date(),
): Promise<TokenSummary | undefined> {
  await db
    .update(apiTokens)
    .set({ revokedAt: now.toISOString() })
    .where(
      and(eq(apiTokens.workspaceId, workspaceId), eq(apiTokens.id, tokenId), isNull(apiTokens.revokedAt)),
    );
  return findToken(db, workspaceId, tokenId);
}

function toSummary(row: typeof apiTokens.$inferSelect): TokenSummary {
  return {
    id: row.id,
    workspaceId: row.workspaceId,
    label: row.label,
    prefix: row.prefix,
    role: row.role,
    createdAt: row.createdAt,
    lastUsedAt: row.lastUsedAt,
    revokedAt: row.revokedAt,
  };
}
