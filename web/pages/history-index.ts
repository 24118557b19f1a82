/**
 * The teams and quarters named in the history, read once from GET /api/v1/experiments (the API
 * has no team list). A test's quarter follows the review's rule: the quarter of its decision
 * date, else of its end date, else of its start date.
 */
import { apiJson } from "./common.ts";

interface ExperimentDates {
  readonly team: string | null;
  readonly startedOn: string | null;
  readonly endedOn: string | null;
  readonly decidedOn: string | null;
}

export interface HistoryIndex {
  readonly teams: readonly string[];
  readonly quarters: readonly string[];
}

export function quarterOf(date: string): string {
  const month = Number(date.slice(5, 7));
  return `${date.slice(0, 4)}Q${Math.ceil(month / 3)}`;
}

let cached: Promise<HistoryIndex> | undefined;

export function historyIndex(): Promise<HistoryIndex> {
  cached ??= readIndex();
  return cached;
}

async function readIndex(): Promise<HistoryIndex> {
  const teams = new Set<string>();
  const quarters = new Set<string>();
  // 500 is the API's largest page.
  for (let offset = 0; ; offset += 500) {
    const page = await apiJson<{ items: ExperimentDates[]; total: number }>(
      `/api/v1/experiments?limit=500&offset=${offset}`,
    );
    for (const item of page.items) {
      if (item.team) teams.add(item.team);
      const date = item.decidedOn ?? item.endedOn ?? item.startedOn;
      if (date) quarters.add(quarterOf(date));
    }
    if (page.items.length === 0 || offset + page.items.length >= page.total) break;
  }
  return {
    teams: [...teams].sort((left, right) => left.localeCompare(right)),
    quarters: [...quarters].sort(),
  };
}
