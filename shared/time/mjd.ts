import { quoteInput } from '../formats/errors.js';

/**
 * Exact arrival times. A double holds ~16 significant digits, so an MJD near 60000 in one
 * Number is good only to ~1 µs. An Epoch keeps the integer day, whole seconds of the day and a
 * fraction of a second separately; parsing splits the decimal text into 8-digit chunks so
 * every step is exact integer arithmetic in doubles (each product stays below 2⁵³).
 */
export interface Epoch {
  /** integer MJD */
  day: number;
  /** whole seconds of the day, 0 ≤ sec < 86400 */
  sec: number;
  /** fraction of a second, 0 ≤ frac < 1 */
  frac: number;
}

export class EpochSyntaxError extends Error {}

const DIGIT_0 = 48;
const POW10 = [1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8];

/**
 * Value of the 8-digit chunk of the fraction starting at fractional digit `from` (digits past
 * the end count as 0).
 */
function chunk(text: string, start: number, end: number, from: number): number {
  let v = 0;
  const a = start + from;
  const b = Math.min(a + 8, end);
  for (let i = a; i < b; i++) v = v * 10 + (text.charCodeAt(i) - DIGIT_0);
  return a < b ? v * POW10[8 - (b - a)] : 0;
}

/** Parse decimal MJD text ("60000.123456789012345") without passing through one double. */
export function parseMjd(text: string): Epoch {
  let start = 0;
  let end = text.length;
  while (start < end && text.charCodeAt(start) <= 32) start++;
  while (end > start && text.charCodeAt(end - 1) <= 32) end--;
  let day = 0;
  let i = start;
  for (; i < end; i++) {
    const c = text.charCodeAt(i) - DIGIT_0;
    if (c < 0 || c > 9) break;
    day = day * 10 + c;
  }
  const intDigits = i - start;
  let fracStart = end;
  if (i < end) {
    if (text.charCodeAt(i) !== 46 /* . */) return syntaxError(text);
    fracStart = i + 1;
    for (let j = fracStart; j < end; j++) {
      const c = text.charCodeAt(j) - DIGIT_0;
      if (c < 0 || c > 9) return syntaxError(text);
    }
  }
  if (intDigits === 0) return syntaxError(text);
  if (intDigits > 9)
    throw new EpochSyntaxError(`MJD ${quoteInput(text.slice(start, end))} is out of range`);
  const c1 = chunk(text, fracStart, end, 0);
  const c2 = chunk(text, fracStart, end, 8);
  const c3 = chunk(text, fracStart, end, 16);
  // seconds = 86400 · (c1/1e8 + c2/1e16 + c3/1e24) = 864·c1/1e6 + 864·c2/1e14 + 864·c3/1e22
  const a = 864 * c1; // < 8.64e10, exact
  const sec = Math.floor(a / 1e6);
  const rem = a - sec * 1e6; // exact integer < 1e6
  const frac = rem / 1e6 + (864 * c2) / 1e14 + (864 * c3) / 1e22;
  return frac >= 1 ? normalise({ day, sec, frac }) : { day, sec, frac };
}

/** The error for text that is not a decimal MJD; the text is quoted shortened (≤ 40 characters). */
function syntaxError(text: string): never {
  const t = text.trim();
  if (/^-\d/.test(t)) throw new EpochSyntaxError(`MJD ${quoteInput(t)} is negative`);
  throw new EpochSyntaxError(
    `${quoteInput(t)} is not a decimal MJD (digits, optional point and fraction)`,
  );
}

/** Bring sec and frac back into range after arithmetic. */
export function normalise(e: Epoch): Epoch {
  let { day, sec, frac } = e;
  const wholeFrac = Math.floor(frac);
  if (wholeFrac !== 0) {
    sec += wholeFrac;
    frac -= wholeFrac;
  }
  const wholeDays = Math.floor(sec / 86400);
  if (wholeDays !== 0) {
    day += wholeDays;
    sec -= wholeDays * 86400;
  }
  return { day, sec, frac };
}

/** a − b in seconds, exact to ~1e-16 s for differences of a day or less. */
export function diffSeconds(a: Epoch, b: Epoch): number {
  return (a.day - b.day) * 86400 + (a.sec - b.sec) + (a.frac - b.frac);
}

/** Epoch plus a (small) number of seconds. */
export function addSeconds(e: Epoch, seconds: number): Epoch {
  const whole = Math.floor(seconds);
  return normalise({ day: e.day, sec: e.sec + whole, frac: e.frac + (seconds - whole) });
}

/** Approximate MJD as one double (for grouping, plotting and series epochs; ~1 µs). */
export function toMjdNumber(e: Epoch): number {
  return e.day + (e.sec + e.frac) / 86400;
}

/**
 * Decimal text of an epoch with `decimals` digits after the point (≤ 20), rounded half up.
 * Uses femtoseconds in BigInt so the text is exact to well below a picosecond.
 */
export function formatMjd(e: Epoch, decimals = 16): string {
  const d = Math.max(0, Math.min(20, Math.trunc(decimals)));
  const n = normalise(e);
  const fs = BigInt(n.sec) * 1_000_000_000_000_000n + BigInt(Math.round(n.frac * 1e15));
  const dayFs = 86_400_000_000_000_000_000n;
  const scale = 10n ** BigInt(d);
  let fracDigits = (fs * scale * 2n + dayFs) / (2n * dayFs);
  let day = BigInt(n.day);
  if (fracDigits >= scale) {
    fracDigits -= scale;
    day += 1n;
  }
  return d === 0 ? day.toString() : `${day}.${fracDigits.toString().padStart(d, '0')}`;
}

/** Number of digits after the decimal point in an MJD text (0 when none). */
export function mjdDecimals(text: string): number {
  const t = text.trim();
  const dot = t.indexOf('.');
  return dot < 0 ? 0 : t.length - dot - 1;
}
