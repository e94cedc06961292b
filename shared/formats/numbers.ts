// One digit run, an optional fraction, an optional exponent. Written so no two quantifiers can
// match the same digits: the earlier `\d+\.?\d*` let a long run of digits followed by a bad
// character be split between `\d+` and `\d*` in every way before failing (quadratic time; a
// 1 MB number took minutes).
const DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;

/** Strict decimal parse: rejects "", "NaN", "Infinity", "0x10", "1,5" and anything non-finite. */
export function parseDecimal(text: string): number | undefined {
  const t = text.trim();
  if (!DECIMAL.test(t)) return undefined;
  const v = Number(t);
  return Number.isFinite(v) ? v : undefined;
}
