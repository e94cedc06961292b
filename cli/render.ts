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

const isRecord = (v: unknown): v is Record<string, unknown> =>
  v !== null && typeof v === 'object' && !Array.isArray(v);

/**
 * JSON for people and programs alike: one top-level key per line, and arrays of objects (visits,
 * points, rows) one compact object per line — readable, diffable, and a fraction of the size of
 * fully indented output for 10⁵ visits. Yields pieces so large results are never one string.
 */
export function* jsonChunks(value: unknown): Generator<string> {
  if (!isRecord(value)) {
    yield JSON.stringify(value) + '\n';
    return;
  }
  let first = true;
  for (const [key, v] of Object.entries(value)) {
    if (v === undefined) continue;
    const lead = `${first ? '{\n' : ',\n'}  ${JSON.stringify(key)}: `;
    first = false;
    if (Array.isArray(v) && v.length > 0 && v.every(isRecord)) {
      let block = lead + '[';
      for (let i = 0; i < v.length; i++) {
        block += (i ? ',\n    ' : '\n    ') + JSON.stringify(v[i]);
        if (block.length > 1 << 16) {
          yield block;
          block = '';
        }
      }
      yield block + '\n  ]';
    } else {
      yield lead + JSON.stringify(v);
    }
  }
  yield first ? '{}\n' : '\n}\n';
}

export function json(value: unknown): string {
  return [...jsonChunks(value)].join('');
}
