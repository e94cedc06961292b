import type { ToaHeader, ToaRow } from './toas.js';
import type { Epoch } from '../time/mjd.js';

/** Interned ids (source, receiver) start in 16 bits and widen to 32 when a table has more names. */
type IdColumn = Uint16Array | Int32Array;
/** Largest id a Uint16 id column holds (receivers are stored as id + 1, 0 meaning none). */
const ID16_MAX = 0xfffe;

function grown<T extends Int32Array | Uint32Array | Uint16Array | Float64Array>(
  a: T,
  size: number,
  length: number,
): T {
  const fresh = new (a.constructor as new (n: number) => T)(size);
  fresh.set(a.subarray(0, Math.min(length, size)));
  return fresh;
}

/** A fresh string with no link to the text it was cut from (a sliced string keeps its parent). */
function own(name: string): string {
  return name.length < 13 ? name : name.split('').join('');
}

/**
 * Arrival times held column by column in typed arrays, so ten million rows cost a few hundred
 * megabytes and no per-row objects. Each column has the narrowest type that holds it exactly:
 * integer MJD day and whole seconds in 32-bit integers, the row number unsigned 32-bit, source
 * and receiver ids 16-bit (32-bit beyond 65 535 names); the values that carry precision (fraction
 * of a second, frequency, uncertainty, residual, period, pulse number, DM) stay doubles. The
 * optional columns (residual, period, pulse, DM and its error, receiver) exist only when the
 * header has them or a pushed row brings a value. Required: 4 + 4 + 8 + 8 + 8 + 4 + 2 = 38
 * bytes per row; a residual table with receivers 48.
 */
export class ToaTable {
  length = 0;
  readonly header: ToaHeader;
  readonly sources: string[] = [];
  readonly receivers: string[] = [];
  private readonly sourceIndex = new Map<string, number>();
  private readonly receiverIndex = new Map<string, number>();
  private capacity: number;
  private day: Int32Array;
  private sec: Int32Array;
  private frac: Float64Array;
  private freq: Float64Array;
  private err: Float64Array;
  private rowNo: Uint32Array;
  private src: IdColumn;
  /** receiver id + 1; 0: the row has no receiver */
  private rcv: IdColumn | undefined;
  private res: Float64Array | undefined;
  private period: Float64Array | undefined;
  private pulse: Float64Array | undefined;
  private dm: Float64Array | undefined;
  private dmErr: Float64Array | undefined;
  private lastSource = '';
  private lastSourceId = -1;
  private lastReceiver = '';
  private lastReceiverId = -1;
  /** Largest number of decimals seen in an MJD text (for writing epochs back). */
  mjdDecimals = 0;

  /**
   * capacity: expected rows. A close guess avoids regrowing; a table that outgrows it grows by
   * half its size, and `trim` gives back what a generous guess left unused.
   */
  constructor(header: ToaHeader, capacity = 65536) {
    this.header = header;
    const c = Math.max(16, Math.ceil(capacity));
    this.capacity = c;
    this.day = new Int32Array(c);
    this.sec = new Int32Array(c);
    this.frac = new Float64Array(c);
    this.freq = new Float64Array(c);
    this.err = new Float64Array(c);
    this.rowNo = new Uint32Array(c);
    this.src = new Uint16Array(c);
    if (header.hasReceiver) this.rcv = new Uint16Array(c);
    if (header.hasResidual) this.res = this.nanColumn();
    if (header.hasPeriod) this.period = this.nanColumn();
    if (header.hasPulse) this.pulse = this.nanColumn();
    if (header.hasDm) {
      this.dm = this.nanColumn();
      this.dmErr = this.nanColumn();
    }
  }

  /** An optional column of the current capacity, NaN (not given) everywhere. */
  private nanColumn(): Float64Array {
    return new Float64Array(this.capacity).fill(NaN);
  }

  /** Number of rows the columns can hold before they grow. */
  get allocatedRows(): number {
    return this.capacity;
  }

  /** Bytes held by the columns (what `allocatedRows` rows cost). */
  get allocatedBytes(): number {
    let b = 0;
    for (const a of [
      this.day,
      this.sec,
      this.frac,
      this.freq,
      this.err,
      this.rowNo,
      this.src,
      this.rcv,
      this.res,
      this.period,
      this.pulse,
      this.dm,
      this.dmErr,
    ])
      b += a?.byteLength ?? 0;
    return b;
  }

  /** Reallocate every column to `size` rows (≥ length), one column at a time. */
  private resize(size: number): void {
    const n = this.length;
    this.day = grown(this.day, size, n);
    this.sec = grown(this.sec, size, n);
    this.frac = grown(this.frac, size, n);
    this.freq = grown(this.freq, size, n);
    this.err = grown(this.err, size, n);
    this.rowNo = grown(this.rowNo, size, n);
    this.src = grown(this.src, size, n);
    if (this.rcv) this.rcv = grown(this.rcv, size, n);
    const nan = (a: Float64Array | undefined) => {
      if (!a) return undefined;
      const g = grown(a, size, n);
      if (size > n) g.fill(NaN, n);
      return g;
    };
    this.res = nan(this.res);
    this.period = nan(this.period);
    this.pulse = nan(this.pulse);
    this.dm = nan(this.dm);
    this.dmErr = nan(this.dmErr);
    this.capacity = size;
  }

  private grow(): void {
    this.resize(Math.max(1024, Math.ceil(this.capacity * 1.5)));
  }

  /**
   * Give back unused capacity when it exceeds `slack` (a fraction of the rows held): call once
   * the table is complete. Rows pushed later grow it again.
   */
  trim(slack = 0.02): void {
    const want = Math.max(16, this.length);
    if (this.capacity > want * (1 + slack)) this.resize(want);
  }

  private intern(map: Map<string, number>, list: string[], name: string): number {
    let i = map.get(name);
    if (i === undefined) {
      i = list.length;
      const kept = own(name);
      list.push(kept);
      map.set(kept, i);
    }
    return i;
  }

  push(r: ToaRow): void {
    const n = this.length;
    if (n === this.capacity) this.grow();
    const day = r.epoch.day;
    let { sec, frac } = r.epoch;
    if (sec !== (sec | 0)) {
      // whole seconds are stored as integers: a fractional part moves to frac (same instant)
      const whole = Math.floor(sec);
      frac += sec - whole;
      sec = whole;
    }
    if (day !== (day | 0)) throw new RangeError(`row ${r.row}: MJD day ${day} is out of range`);
    this.day[n] = day;
    this.sec[n] = sec;
    this.frac[n] = frac;
    this.freq[n] = r.freqMhz;
    this.err[n] = r.errUs;
    if (r.residualUs !== undefined || this.res)
      (this.res ??= this.nanColumn())[n] = r.residualUs ?? NaN;
    if (r.periodS !== undefined || this.period)
      (this.period ??= this.nanColumn())[n] = r.periodS ?? NaN;
    if (r.pulse !== undefined || this.pulse) (this.pulse ??= this.nanColumn())[n] = r.pulse ?? NaN;
    if (r.dm !== undefined || this.dm) (this.dm ??= this.nanColumn())[n] = r.dm ?? NaN;
    if (r.dmErr !== undefined || this.dmErr) (this.dmErr ??= this.nanColumn())[n] = r.dmErr ?? NaN;
    this.rowNo[n] = r.row;
    if (r.source !== this.lastSource || this.lastSourceId < 0) {
      this.lastSource = r.source;
      this.lastSourceId = this.intern(this.sourceIndex, this.sources, r.source);
      if (this.lastSourceId > ID16_MAX && this.src instanceof Uint16Array)
        this.src = Int32Array.from(this.src);
    }
    this.src[n] = this.lastSourceId;
    if (r.receiver !== undefined || this.rcv) {
      let id = -1;
      if (r.receiver !== undefined) {
        if (r.receiver !== this.lastReceiver || this.lastReceiverId < 0) {
          this.lastReceiver = r.receiver;
          this.lastReceiverId = this.intern(this.receiverIndex, this.receivers, r.receiver);
        }
        id = this.lastReceiverId;
      }
      this.rcv ??= new Uint16Array(this.capacity);
      if (id > ID16_MAX && this.rcv instanceof Uint16Array) this.rcv = Int32Array.from(this.rcv);
      this.rcv[n] = id + 1;
    }
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

  /** Let the cached MJD column go (it is rebuilt on the next `mjdColumn` call). */
  releaseMjdColumn(): void {
    this.mjdCache = undefined;
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
    return this.res ? this.res[i] : NaN;
  }
  periodS(i: number): number {
    return this.period ? this.period[i] : NaN;
  }
  /** pulse number (NaN: not given) */
  pulseNumber(i: number): number {
    return this.pulse ? this.pulse[i] : NaN;
  }
  /** wideband arrival times: the row's own DM and error (NaN: not given) */
  dmOf(i: number): number {
    return this.dm ? this.dm[i] : NaN;
  }
  dmErrOf(i: number): number {
    return this.dmErr ? this.dmErr[i] : NaN;
  }
  row(i: number): number {
    return this.rowNo[i];
  }
  sourceId(i: number): number {
    return this.src[i];
  }
  /** receiver id, −1 when the row has none */
  receiverId(i: number): number {
    return this.rcv ? this.rcv[i] - 1 : -1;
  }
}
