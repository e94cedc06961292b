const DECIMAL = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

/** Strict decimal parse: rejects "", "NaN", "Infinity", "0x10", "1,5" and anything non-finite. */
export function parseDecimal(text: string): number | undefined {
  const t = text.trim();
  if (!DECIMAL.test(t)) return undefined;
  const v = Number(t);
  return Number.isFinite(v) ? v : undefined;
}
