export type Parsed = { ok: true; value: number } | { ok: false; message: string };

/** Read a typed field as a strictly positive, finite number; the message says what is wrong. */
export function parsePositive(text: string): Parsed {
  const t = text.trim();
  if (t === '') return { ok: false, message: 'Enter a value.' };
  const value = Number(t);
  if (!Number.isFinite(value)) return { ok: false, message: `“${t}” is not a number.` };
  if (value <= 0) return { ok: false, message: 'Must be greater than 0.' };
  return { ok: true, value };
}
