import type { ToaTable } from '../formats/toa-table.js';

export type VisitGrouping =
  { kind: 'gap'; gapDays: number } | { kind: 'window'; windowDays: number; startMjd: number };

/** Row indices ordered by source, then time. Skips the sort when the table is already ordered. */
export function orderBySourceAndTime(t: ToaTable): Uint32Array {
  const n = t.length;
  const idx = new Uint32Array(n);
  let sorted = true;
  for (let i = 0; i < n; i++) {
    idx[i] = i;
    if (
      i > 0 &&
      (t.sourceId(i) < t.sourceId(i - 1) ||
        (t.sourceId(i) === t.sourceId(i - 1) && t.mjd(i) < t.mjd(i - 1)))
    ) {
      sorted = false;
    }
  }
  if (sorted) return idx;
  const key = new Float64Array(n);
  for (let i = 0; i < n; i++) key[i] = t.mjd(i);
  return idx.sort((a, b) => t.sourceId(a) - t.sourceId(b) || key[a] - key[b] || a - b);
}

/**
 * Split rows into visits: a new visit starts at a new source, or when the time since the
 * previous arrival time exceeds the gap, or (window mode) when the fixed-width window
 * [start + k·w, start + (k+1)·w) changes. Returns [begin, end) ranges into `order`.
 */
export function groupVisits(
  t: ToaTable,
  order: Uint32Array,
  grouping: VisitGrouping,
): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  let begin = 0;
  const windowOf = (i: number) =>
    grouping.kind === 'window'
      ? Math.floor((t.mjd(i) - grouping.startMjd) / grouping.windowDays)
      : 0;
  for (let k = 1; k <= order.length; k++) {
    if (k === order.length) {
      if (order.length > 0) out.push([begin, k]);
      break;
    }
    const a = order[k - 1];
    const b = order[k];
    const split =
      t.sourceId(a) !== t.sourceId(b) ||
      (grouping.kind === 'gap'
        ? t.mjd(b) - t.mjd(a) > grouping.gapDays
        : windowOf(a) !== windowOf(b));
    if (split) {
      out.push([begin, k]);
      begin = k;
    }
  }
  return out;
}
