/**
 * The teams and quarters named in the history, read once from GET /api/v1/experiments (the API
 * has no team list), up to a bound so that a long history does not cost hundreds of requests. A test's quarter follows the review's rule: the quarter of its decision
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
  /** False when the history is longer than the pages read: the lists may miss some names. */
  readonly complete: boolean;
}

/** At most this many experiments are read for the lists (four of the API's largest pages). */
export const indexedExperiments = 2000;

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
  let complete = false;
  // 500 is the API's largest page.
  for (let offset = 0; offset < indexedExperiments; offset += 500) {
    const page = await apiJson<{ items: ExperimentDates[]; total: number }>(
      `/api/v1/experiments?limit=500&offset=${offset}`,
    );
    for (const item of page.items) {
      if (item.team) teams.add(item.team);
      const date = item.decidedOn ?? item.endedOn ?? item.startedOn;
      if (date) quarters.add(quarterOf(date));
    }
    if (page.items.length === 0 || offset + page.items.length >= page.total) {
      complete = true;
      break;
    }
  }
  return {
    teams: [...teams].sort((left, right) => left.localeCompare(right)),
    quarters: [...quarters].sort(),
    complete,
  };
}
