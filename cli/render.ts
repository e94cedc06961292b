import Table from 'cli-table3';
import { stringify } from 'csv-stringify/sync';

export type Cell = string | number | null | undefined | boolean;

/** Numbers printed for reading: fixed significant digits, '—' for missing. */
export function fmt(v: Cell, digits = 6): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return String(v);
    if (v === 0) return '0';
    const a = Math.abs(v);
    return a >= 1e-3 && a < 1e7
      ? String(Number(v.toPrecision(digits)))
      : v.toExponential(digits - 1);
  }
  return String(v);
}

/** A plain table for terminals: numbers right-aligned, no colours (stdout may be a file). */
export function table(head: string[], rows: Cell[][], numericCols: number[] = []): string {
  const t = new Table({
    head,
    style: { head: [], border: [], compact: true },
    colAligns: head.map((_, i) => (numericCols.includes(i) ? 'right' : 'left')),
    chars: { mid: '', 'left-mid': '', 'mid-mid': '', 'right-mid': '' },
  });
  for (const r of rows) t.push(r.map((c) => fmt(c)));
  return t.toString() + '\n';
}

export function csv(head: string[], rows: Cell[][]): string {
  return stringify([
    head,
    ...rows.map((r) => r.map((c) => (c === null || c === undefined ? '' : c))),
  ]);
}

export function json(value: unknown): string {
  return JSON.stringify(value, null, 2) + '\n';
}
