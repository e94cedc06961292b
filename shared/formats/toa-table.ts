import type { ToaHeader, ToaRow } from './toas.js';
import type { Epoch } from '../time/mjd.js';

type ColumnName =
  | 'day'
  | 'sec'
  | 'frac'
  | 'freq'
  | 'err'
  | 'res'
  | 'period'
  | 'row'
  | 'src'
  | 'rcv'
  | 'pulse'
  | 'dm'
  | 'dmErr';
const COLUMNS: ColumnName[] = [
  'day',
  'sec',
  'frac',
  'freq',
  'err',
  'res',
  'period',
  'row',
  'src',
  'rcv',
  'pulse',
  'dm',
  'dmErr',
];

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
  private capacity: number;
  private day: Float64Array;
  private sec: Float64Array;
  private frac: Float64Array;
  private freq: Float64Array;
  private err: Float64Array;
  private res: Float64Array;
  private period: Float64Array;
  private rowNo: Float64Array;
  private src: Float64Array;
  private rcv: Float64Array;
  private pulse: Float64Array;
  private dm: Float64Array;
  private dmErr: Float64Array;
  private lastSource = '';
  private lastSourceId = -1;
  /** Largest number of decimals seen in an MJD text (for writing epochs back). */
  mjdDecimals = 0;

  /** capacity: expected rows (a guess from the file size avoids regrowing). */
  constructor(header: ToaHeader, capacity = 65536) {
    this.header = header;
    this.capacity = Math.max(16, Math.ceil(capacity));
    const c = this.capacity;
    this.day = new Float64Array(c);
    this.sec = new Float64Array(c);
    this.frac = new Float64Array(c);
    this.freq = new Float64Array(c);
    this.err = new Float64Array(c);
    this.res = new Float64Array(c);
    this.period = new Float64Array(c);
    this.rowNo = new Float64Array(c);
    this.src = new Float64Array(c);
    this.rcv = new Float64Array(c);
    this.pulse = new Float64Array(c);
    this.dm = new Float64Array(c);
    this.dmErr = new Float64Array(c);
  }

  private grow(): void {
    const next = Math.max(1024, this.capacity * 2);
    for (const name of COLUMNS) {
      const key = name === 'row' ? 'rowNo' : name;
      const old = this[key];
      const fresh = new Float64Array(next);
      fresh.set(old);
      this[key] = fresh;
    }
    this.capacity = next;
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
    if (n === this.capacity) this.grow();
    this.day[n] = r.epoch.day;
    this.sec[n] = r.epoch.sec;
    this.frac[n] = r.epoch.frac;
    this.freq[n] = r.freqMhz;
    this.err[n] = r.errUs;
    this.res[n] = r.residualUs ?? NaN;
    this.period[n] = r.periodS ?? NaN;
    this.pulse[n] = r.pulse ?? NaN;
    this.dm[n] = r.dm ?? NaN;
    this.dmErr[n] = r.dmErr ?? NaN;
    this.rowNo[n] = r.row;
    if (r.source !== this.lastSource || this.lastSourceId < 0) {
      this.lastSource = r.source;
      this.lastSourceId = this.intern(this.sourceIndex, this.sources, r.source);
    }
    this.src[n] = this.lastSourceId;
    this.rcv[n] =
      r.receiver === undefined ? -1 : this.intern(this.receiverIndex, this.receivers, r.receiver);
    const t = r.mjdText;
    const dot = t.indexOf('.');
    if (dot >= 0 && t.length - dot - 1 > this.mjdDecimals) this.mjdDecimals = t.length - dot - 1;
    this.length = n + 1;
  }

  private mjdCache: Float64Array | undefined;

  /** Approximate MJDs of all rows as doubles (computed once; for ordering and grouping). */
  mjdColumn(): Float64Array {
    if (!this.mjdCache || this.mjdCache.length !== this.length) {
      const out = new Float64Array(this.length);
      for (let i = 0; i < this.length; i++)
        out[i] = this.day[i] + (this.sec[i] + this.frac[i]) / 86400;
      this.mjdCache = out;
    }
    return this.mjdCache;
  }

  epoch(i: number): Epoch {
    return { day: this.day[i], sec: this.sec[i], frac: this.frac[i] };
  }
  /** Approximate MJD as a double (grouping, plotting). */
  mjd(i: number): number {
    return this.day[i] + (this.sec[i] + this.frac[i]) / 86400;
  }
  freqMhz(i: number): number {
    return this.freq[i];
  }
  errUs(i: number): number {
    return this.err[i];
  }
  residualUs(i: number): number {
    return this.res[i];
  }
  periodS(i: number): number {
    return this.period[i];
  }
  /** pulse number (NaN: not given) */
  pulseNumber(i: number): number {
    return this.pulse[i];
  }
  /** wideband arrival times: the row's own DM and error (NaN: not given) */
  dmOf(i: number): number {
    return this.dm[i];
  }
  dmErrOf(i: number): number {
    return this.dmErr[i];
  }
  row(i: number): number {
    return this.rowNo[i];
  }
  sourceId(i: number): number {
    return this.src[i];
  }
  receiverId(i: number): number {
    return this.rcv[i];
  }
}
