/**
 * Readers for single cells of an imported file. Each returns the value or a message a person
 * understands; the caller adds the row and column. Cells are trimmed; an empty cell is "not given".
 */

export type CellResult<Value> =
  | { readonly ok: true; readonly value: Value }
  | { readonly ok: false; readonly message: string };

export interface DecimalValue {
  readonly value: number;
  /** Half a unit of the last digit written (0.0005 for "0.012" or "1.2%"): the rounding the text allows. */
  readonly halfUnit: number;
}

const decimalPattern = /^([+-]?)(\d+(?:\.\d*)?|\.\d+)(?:[eE]([+-]?\d+))?(%?)$/;

function failure(message: string): { ok: false; message: string } {
  return { ok: false, message };
}

/** A decimal number; a trailing % sign reads it as percent ("1.2%" is 0.012). */
export function parseDecimal(text: string): CellResult<DecimalValue> {
  const trimmed = text.trim();
  const match = decimalPattern.exec(trimmed);
  if (!match) {
    return failure(
      `"${text}" is not a number (write e.g. 0.012, -3.5, 1e-4 or 1.2%; no thousands separators)`,
    );
  }
  const [, , digits = "", exponentText, percentSign] = match;
  const isPercent = percentSign === "%";
  const numeric = Number(trimmed.slice(0, isPercent ? -1 : undefined));
  if (!Number.isFinite(numeric)) return failure(`"${text}" is too large to be a number`);
  const decimalsWritten = digits.includes(".") ? digits.length - digits.indexOf(".") - 1 : 0;
  const exponent = exponentText === undefined ? 0 : Number(exponentText);
  const halfUnit = 0.5 * 10 ** (exponent - decimalsWritten) * (isPercent ? 0.01 : 1);
  return { ok: true, value: { value: isPercent ? numeric / 100 : numeric, halfUnit } };
}

/** A whole number of units (a count); no percent, no decimals. */
export function parseCount(text: string): CellResult<number> {
  const trimmed = text.trim();
  if (/^-\d+$/.test(trimmed)) return failure(`must not be negative; got ${trimmed}`);
  if (!/^\+?\d+$/.test(trimmed)) return failure(`"${text}" is not a whole number (write e.g. 10234)`);
  const value = Number(trimmed);
  if (!Number.isSafeInteger(value)) return failure(`"${text}" is too large`);
  return { ok: true, value };
}

const trueWords = new Set(["true", "yes", "1", "y"]);
const falseWords = new Set(["false", "no", "0", "n"]);

/** true/false, yes/no, y/n or 1/0, in any case. */
export function parseBoolean(text: string): CellResult<boolean> {
  const word = text.trim().toLowerCase();
  if (trueWords.has(word)) return { ok: true, value: true };
  if (falseWords.has(word)) return { ok: true, value: false };
  return failure(`"${text}" is not a yes/no value (write true or false, yes or no, 1 or 0)`);
}

/** A calendar date written YYYY-MM-DD. */
export function parseDate(text: string): CellResult<string> {
  const trimmed = text.trim();
  const match = /^(\d{4})-(\d{2})-(\d{2})$/.exec(trimmed);
  if (!match) return failure(`"${text}" is not a date written YYYY-MM-DD (e.g. 2024-03-18)`);
  const [, year, month, day] = match.map(Number) as [number, number, number, number];
  const date = new Date(Date.UTC(year, month - 1, day));
  if (date.getUTCFullYear() !== year || date.getUTCMonth() !== month - 1 || date.getUTCDate() !== day) {
    return failure(`"${text}" is not a day of the calendar`);
  }
  return { ok: true, value: trimmed };
}

/** One of a fixed list of words; case, spaces and hyphens are forgiven ("Not shipped" is not_shipped). */
export function parseChoice<Choice extends string>(
  text: string,
  choices: readonly Choice[],
): CellResult<Choice> {
  const word = text
    .trim()
    .toLowerCase()
    .replace(/[\s-]+/g, "_");
  const choice = choices.find((candidate) => candidate === word);
  if (choice !== undefined) return { ok: true, value: choice };
  return failure(
    `"${text}" is not one of ${choices.join(", ")}: write one of these (case, spaces and hyphens do not matter)`,
  );
}

/**
 * A planned split of traffic, control first: "50/50", "0.5/0.5", "1:1" or "90/10".
 * Returned as shares that sum to 1.
 */
export function parsePlannedSplit(text: string): CellResult<number[]> {
  const parts = text.trim().split(/\s*[/:]\s*/);
  const shares: number[] = [];
  for (const part of parts) {
    const parsed = parseDecimal(part);
    if (!parsed.ok || !(parsed.value.value > 0)) {
      return failure(
        `"${text}" is not a planned split (write control/treatment shares, e.g. 50/50 or 0.5/0.5)`,
      );
    }
    shares.push(parsed.value.value);
  }
  if (shares.length !== 2) {
    return failure(`"${text}" must give two shares, control/treatment (this layout has one treatment arm)`);
  }
  const total = shares.reduce((sum, share) => sum + share, 0);
  return { ok: true, value: shares.map((share) => share / total) };
}
