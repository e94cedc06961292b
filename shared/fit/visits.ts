import type { ToaTable } from '../formats/toa-table.js';

export type VisitGrouping =
  { kind: 'gap'; gapDays: number } | { kind: 'window'; windowDays: number; startMjd: number };

/**
 * Row indices ordered by source, then time: a stable counting sort by source (rows of one
 * source keep their file order), then a sort by time only for sources whose rows are not
 * already in time order.
 */
export function orderBySourceAndTime(t: ToaTable): Uint32Array {
  const n = t.length;
  const mjd = t.mjdColumn();
  const nSources = t.sources.length;
  const start = new Uint32Array(nSources + 1);
  for (let i = 0; i < n; i++) start[t.sourceId(i) + 1]++;
  for (let s = 0; s < nSources; s++) start[s + 1] += start[s];
  const fill = start.slice(0, nSources);
  const idx = new Uint32Array(n);
  for (let i = 0; i < n; i++) idx[fill[t.sourceId(i)]++] = i;
  for (let s = 0; s < nSources; s++) {
    const a = start[s];
    const b = start[s + 1];
    let sorted = true;
    for (let k = a + 1; k < b && sorted; k++) if (mjd[idx[k]] < mjd[idx[k - 1]]) sorted = false;
    if (!sorted) idx.subarray(a, b).sort((x, y) => mjd[x] - mjd[y] || x - y);
  }
  return idx;
}

/**
 * Split rows into visits: a new visit starts at a new source, or when the time since the
 * previous arrival time exceeds the gap, or (window mode) when the fixed-width window
 * [start + k·w, start + (k+1)·w) changes. Returns the visits' boundaries as positions in
 * `order`: visit k is [bounds[k], bounds[k + 1]) (one number per visit, not a pair of arrays).
 */
export function visitBounds(t: ToaTable, order: Uint32Array, grouping: VisitGrouping): number[] {
  const mjd = t.mjdColumn();
  const n = order.length;
  if (n === 0) return [];
  const out: number[] = [0];
  // one loop per kind, so the per-row test is not re-decided for every row
  if (grouping.kind === 'gap') {
    const gap = grouping.gapDays;
    for (let k = 1; k < n; k++) {
      const a = order[k - 1];
      const b = order[k];
      if (t.sourceId(a) !== t.sourceId(b) || mjd[b] - mjd[a] > gap) out.push(k);
    }
  } else {
    const { startMjd, windowDays } = grouping;
    const windowOf = (i: number) => Math.floor((mjd[i] - startMjd) / windowDays);
    for (let k = 1; k < n; k++) {
      const a = order[k - 1];
      const b = order[k];
      if (t.sourceId(a) !== t.sourceId(b) || windowOf(a) !== windowOf(b)) out.push(k);
    }
  }
  out.push(n);
  return out;
}

/** The visits of `visitBounds` as [begin, end) ranges into `order`. */
export function groupVisits(
  t: ToaTable,
  order: Uint32Array,
  grouping: VisitGrouping,
): Array<[number, number]> {
  const b = visitBounds(t, order, grouping);
  const out: Array<[number, number]> = [];
  for (let k = 0; k + 1 < b.length; k++) out.push([b[k], b[k + 1]]);
  return out;
}
