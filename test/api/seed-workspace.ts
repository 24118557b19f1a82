/**
 * Test data for the API tests, written straight into the tables (the import pipeline has its own
 * tests; these check what the API does with stored records). Names are invented.
 */

import { issueToken, revokeToken } from "../../src/api/tokens.ts";
import type { Database } from "../../src/db/client.ts";
import { experiments, imports, metrics, realizedMeasurements, results } from "../../src/db/schema.ts";
import { createWorkspace } from "../../src/workspaces.ts";

export interface SeededWorkspace {
  readonly id: number;
  readonly name: string;
  readonly tokens: {
    readonly read: string;
    readonly write: string;
    readonly admin: string;
    readonly revoked: string;
  };
  readonly tokenIds: {
    readonly read: number;
    readonly write: number;
    readonly admin: number;
    readonly revoked: number;
  };
  readonly experimentKeys: readonly string[];
  readonly metricKeys: readonly string[];
  readonly resultIds: readonly number[];
  readonly importIds: readonly number[];
  /** A string that appears only in this workspace's data, to prove none leaks elsewhere. */
  readonly marker: string;
}

export async function seedWorkspace(db: Database, name: string): Promise<SeededWorkspace> {
  const created = await createWorkspace(db, name);
  const workspaceId = created.workspace.id;
  const marker = `marker-${name}`;
  const read = await issueToken(db, { workspaceId, role: "read", label: "read" });
  const write = await issueToken(db, { workspaceId, role: "write", label: "write" });
  const revoked = await issueToken(db, { workspaceId, role: "admin", label: "revoked" });
  await revokeToken(db, workspaceId, revoked.summary.id);

  const [conversion, latency] = await db
    .insert(metrics)
    .values([
      {
        workspaceId,
        key: "conversion",
        name: "Checkout conversion",
        kind: "binary",
        direction: "increase",
        family: "conversion",
      },
      {
        workspaceId,
        key: `${name}-latency`,
        name: "Page latency",
        kind: "continuous",
        direction: "decrease",
        family: "latency",
      },
    ])
    .returning();
  if (!conversion || !latency) throw new Error("metric seed failed");

  const experimentRows = await db
    .insert(experiments)
    .values([
      {
        workspaceId,
        key: `${name}-001`,
        name: `${marker} basket reminder`,
        team: "checkout",
        startedOn: "2024-01-08",
        endedOn: "2024-01-29",
        decision: "shipped",
        decidedOn: "2024-02-01",
        plannedSplit: [0.5, 0.5],
      },
      {
        workspaceId,
        key: `${name}-002`,
        name: `${marker} lighter header`,
        team: "platform",
        startedOn: "2024-03-04",
        endedOn: "2024-03-25",
        decision: "not_shipped",
        isAa: false,
      },
      {
        workspaceId,
        key: `${name}-003`,
        name: `${marker} search hints`,
        team: "checkout",
        startedOn: "2024-06-03",
        endedOn: null,
        decision: "pending",
        stoppedEarly: true,
      },
    ])
    .returning();
  const [first, second, third] = experimentRows;
  if (!first || !second || !third) throw new Error("experiment seed failed");

  const resultRows = await db
    .insert(results)
    .values([
      {
        experimentId: first.id,
        metricId: conversion.id,
        isPrimary: true,
        input: { lift: "0.02", lift_se: "0.01" },
        inputForm: "standard_error",
        lift: 0.02,
        liftSe: 0.01,
      },
      {
        experimentId: first.id,
        metricId: latency.id,
        isPrimary: false,
        input: { lift: "0.01", lift_se: "0.005" },
        inputForm: "standard_error",
        lift: -0.01,
        liftSe: 0.005,
      },
      {
        experimentId: second.id,
        metricId: latency.id,
        isPrimary: true,
        input: { lift: "-0.03", lift_se: "0.01" },
        inputForm: "standard_error",
        lift: 0.03,
        liftSe: 0.01,
        srmPValue: 0.0001,
        srmFlagged: true,
      },
      {
        experimentId: third.id,
        metricId: conversion.id,
        isPrimary: true,
        input: { lift: "0.001", lift_se: "0.004" },
        inputForm: "standard_error",
        lift: 0.001,
        liftSe: 0.004,
      },
    ])
    .returning();

  await db.insert(realizedMeasurements).values({
    experimentId: first.id,
    metricId: conversion.id,
    estimate: 0.012,
    standardError: 0.006,
    method: "holdout",
    measuredOn: "2024-05-01",
  });

  const importRows = await db
    .insert(imports)
    .values({
      workspaceId,
      tokenId: write.summary.id,
      kind: "results",
      fileName: `${marker}.csv`,
      contentHash: "0".repeat(64),
      rowCount: 4,
      created: 4,
      outcome: "applied",
      errors: [],
    })
    .returning();

  return {
    id: workspaceId,
    name,
    tokens: { read: read.token, write: write.token, admin: created.token, revoked: revoked.token },
    tokenIds: {
      read: read.summary.id,
      write: write.summary.id,
      admin: created.tokenSummary.id,
      revoked: revoked.summary.id,
    },
    experimentKeys: experimentRows.map((row) => row.key),
    metricKeys: ["conversion", `${name}-latency`],
    resultIds: resultRows.map((row) => row.id),
    importIds: importRows.map((row) => row.id),
    marker,
  };
}

/** A throwaway experiment for a cell that deletes one. */
export async function insertVictimExperiment(
  db: Database,
  workspaceId: number,
  key: string,
): Promise<string> {
  await db.insert(experiments).values({ workspaceId, key, name: `victim ${key}`, decision: "pending" });
  return key;
}
