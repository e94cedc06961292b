import type { ToaHeader, ToaRow } from './toas.js';
import type { Epoch } from '../time/mjd.js';

/** Growable Float64Array. */
class Column {
  data: Float64Array;
  constructor(capacity: number) {
    this.data = new Float64Array(capacity);
  }
  grow(capacity: number): void {
    const next = new Float64Array(capacity);
    next.set(this.data);
    this.data = next;
  }
}

/**
 * Arrival times held column by column in typed arrays, so a million rows cost tens of
 * megabytes and no per-row objects. Sources and receivers are interned.
 */
export class ToaTable {
  length = 0;
  readonly header: ToaHeader;
  readonly sources: string[] = [];
  readonly receivers: string[] = [];
  private readonly sourceIndex = new Map<string, number>();
  private readonly receiverIndex = new Map<string, number>();
  private cols: Record<
    'day' | 'sec' | 'frac' | 'freq' | 'err' | 'res' | 'period' | 'row' | 'src' | 'rcv',
    Column
  >;
  /** Largest number of decimals seen in an MJD text (for writing epochs back). */
  mjdDecimals = 0;

  constructor(header: ToaHeader, capacity = 1024) {
    this.header = header;
    const c = () => new Column(capacity);
    this.cols = {
      day: c(),
      sec: c(),
      frac: c(),
      freq: c(),
      err: c(),
      res: c(),
      period: c(),
      row: c(),
      src: c(),
      rcv: c(),
    };
  }

  private intern(map: Map<string, number>, list: string[], name: string): number {
    let i = map.get(name);
    if (i === undefined) {
      i = list.length;
      list.push(name);
      map.set(name, i);
    }
    return i;
  }

  push(r: ToaRow): void {
    const n = this.length;
    if (n === this.cols.day.data.length) {
      for (const col of Object.values(this.cols)) col.grow(Math.max(1024, n * 2));
    }
    const c = this.cols;
    c.day.data[n] = r.epoch.day;
    c.sec.data[n] = r.epoch.sec;
    c.frac.data[n] = r.epoch.frac;
    c.freq.data[n] = r.freqMhz;
    c.err.data[n] = r.errUs;
    c.res.data[n] = r.residualUs ?? NaN;
    c.period.data[n] = r.periodS ?? NaN;
    c.row.data[n] = r.row;
    c.src.data[n] = this.intern(this.sourceIndex, this.sources, r.source);
    c.rcv.data[n] =
      r.receiver === undefined ? -1 : this.intern(this.receiverIndex, this.receivers, r.receiver);
    const dot = r.mjdText.indexOf('.');
    if (dot >= 0) this.mjdDecimals = Math.max(this.mjdDecimals, r.mjdText.length - dot - 1);
    this.length = n + 1;
  }

  epoch(i: number): Epoch {
    return { day: this.cols.day.data[i], sec: this.cols.sec.data[i], frac: this.cols.frac.data[i] };
  }
  /** Approximate MJD as a double (grouping, plotting). */
  mjd(i: number): number {
    return this.cols.day.data[i] + (this.cols.sec.data[i] + this.cols.frac.data[i]) / 86400;
  }
  freqMhz(i: number): number {
    return this.cols.freq.data[i];
  }
  errUs(i: number): number {
    return this.cols.err.data[i];
  }
  residualUs(i: number): number {
    return this.cols.res.data[i];
  }
  periodS(i: number): number {
    return this.cols.period.data[i];
  }
  row(i: number): number {
    return this.cols.row.data[i];
  }
  sourceId(i: number): number {
    return this.cols.src.data[i];
  }
  receiverId(i: number): number {
    return this.cols.rcv.data[i];
  }
}
