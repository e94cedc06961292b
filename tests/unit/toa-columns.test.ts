import { describe, expect, it } from 'vitest';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { InputError } from '../../shared/formats/errors.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { ToaTable } from '../../shared/formats/toa-table.js';
import {
  checkHeader,
  OPTIONAL_COLUMNS,
  REQUIRED_COLUMNS,
  type ToaRow,
} from '../../shared/formats/toas.js';
import { makeTable } from '../helpers/toas.js';

const constant = dispersionConstant('conventional');
const opts = { constant, grouping: { kind: 'gap' as const, gapDays: 0.5 }, evolution: 0 };

describe('wideband arrival times (dm and dm_err columns)', () => {
  it('a visit DM is the inverse-variance mean, χ² on n − 1 dof, error scaled when χ²_red > 1', () => {
    // hand values: DMs 10.0 ± 0.1 and 10.3 ± 0.2 → weights 100 and 25, mean 10.06,
    // σ = 1/√125 = 0.0894427, χ² = (0.06/0.1)² + (0.24/0.2)² = 0.36 + 1.44 = 1.8 on 1 dof
    const t = makeTable([
      { source: 'SBP-E', mjd: '60860.2', freq_mhz: 900, err_us: 0.4, dm: 10.0, dm_err: 0.1 },
      { source: 'SBP-E', mjd: '60860.3', freq_mhz: 1400, err_us: 0.3, dm: 10.3, dm_err: 0.2 },
      { source: 'SBP-E', mjd: '60874.3', freq_mhz: 1400, err_us: 0.3, dm: 10.2, dm_err: 0.05 },
    ]);
    const [a, b] = fitDmVisits(t, opts);
    expect(a.n_toas).toBe(2);
    expect(a.dm).toBeCloseTo(10.06, 12);
    expect(a.dm_err).toBeCloseTo(1 / Math.sqrt(125), 12);
    expect(a.chi2).toBeCloseTo(1.8, 12);
    expect(a.dof).toBe(1);
    expect(a.dm_err_scaled).toBeCloseTo(Math.sqrt(1.8) / Math.sqrt(125), 12);
    expect(a.dm_kind).toBe('absolute');
    expect(a.offset_us).toBeNull();
    // a single wideband arrival time is its own DM
    expect(b.dm).toBe(10.2);
    expect(b.dm_err).toBe(0.05);
    expect(b.dof).toBe(0);
  });

  it('dm without dm_err is refused at the header', () => {
    expect(() =>
      makeTable([{ source: 'S', mjd: '60000.1', freq_mhz: 1400, err_us: 1, dm: 10 }]),
    ).toThrow(/has "dm" but not "dm_err"/);
  });

  it('a non-positive dm_err names its row and column', () => {
    try {
      makeTable([{ source: 'S', mjd: '60000.1', freq_mhz: 1400, err_us: 1, dm: 10, dm_err: 0 }]);
      expect.unreachable();
    } catch (e) {
      expect((e as InputError).location).toMatchObject({ row: 1, column: 'dm_err' });
    }
  });
});

describe('pulse numbers (pulse column)', () => {
  // arrival times of one pulse across 600–1700 MHz at DM 47: a sweep of ~0.5 s, hundreds of
  // periods, which folding by the period could not untangle
  const k = constant.value;
  const freqs = [600, 800, 1000, 1300, 1700];
  const rows = (pulse: (i: number) => number, periodS?: number) =>
    freqs.map((f, i) => {
      const t = (k * 47) / (f * f) + (periodS ?? 0) * (pulse(i) - pulse(0));
      const day = 60512;
      return {
        source: 'SBP-C',
        mjd: `${day}.${String(Math.round((0.25 + t / 86400) * 1e15)).padStart(15, '0')}`,
        freq_mhz: f,
        err_us: 1,
        pulse: pulse(i),
        ...(periodS ? { period_s: periodS } : {}),
      };
    });

  it('equal pulse numbers need no period and give the absolute DM', () => {
    const [v] = fitDmVisits(makeTable(rows(() => 0)), opts);
    expect(v.status).toBe('fitted');
    expect(v.dm).toBeCloseTo(47, 6);
  });

  it('different pulse numbers are related through the period', () => {
    const [v] = fitDmVisits(makeTable(rows((i) => 1000 * i, 0.00193)), opts);
    expect(v.dm).toBeCloseTo(47, 6);
  });

  it('different pulse numbers without a period are refused, naming the pulse column', () => {
    try {
      fitDmVisits(makeTable(rows((i) => i)), opts);
      expect.unreachable();
    } catch (e) {
      expect((e as InputError).message).toMatch(/different pulse numbers: give the period/);
      expect((e as InputError).location.column).toBe('pulse');
    }
  });

  it('a fractional pulse number names its row', () => {
    expect(() =>
      makeTable([{ source: 'S', mjd: '60000.1', freq_mhz: 1400, err_us: 1, pulse: 1.5 }]),
    ).toThrow(/row 1: column "pulse": 1.5 is not a whole pulse number/);
  });
});

describe('column layout (shared/formats/toa-table.ts)', () => {
  const required = checkHeader(['source', 'mjd', 'freq_mhz', 'err_us']);
  const residuals = checkHeader(['source', 'mjd', 'freq_mhz', 'err_us', 'residual_us', 'receiver']);
  const everything = checkHeader([...REQUIRED_COLUMNS, ...OPTIONAL_COLUMNS]);
  const row = (i: number, extra: Partial<ToaRow> = {}): ToaRow => ({
    row: i + 1,
    source: `S${i % 3}`,
    mjdText: `60000.${String(i).padStart(12, '0')}`,
    epoch: { day: 60000 + (i >> 4), sec: (i * 37) % 86400, frac: (i % 1000) / 1000 + 1e-13 },
    freqMhz: 700 + i,
    errUs: 0.5 + i / 1e4,
    ...extra,
  });

  it('bytes per row: 38 for the required columns; optional ones only when the header has them', () => {
    // day, sec int32 · frac, freq, err float64 · row uint32 · source id uint16 = 38 bytes;
    // residual float64 + receiver id uint16 = 48; period, pulse, dm, dm_err add 8 each = 80
    for (const [header, perRow] of [
      [required, 38],
      [residuals, 48],
      [everything, 80],
    ] as const) {
      const t = new ToaTable(header, 1000);
      expect(t.allocatedRows).toBe(1000);
      expect(t.allocatedBytes).toBe(1000 * perRow);
    }
  });

  it('every accessor gives back what was pushed, through growth by half and a trim', () => {
    const t = new ToaTable(everything, 16);
    const rows: ToaRow[] = [];
    for (let i = 0; i < 2000; i++) {
      const r = row(i, {
        residualUs: -i / 7,
        receiver: ['low', 'mid', 'high'][i % 3],
        periodS: 0.001 + i / 1e6,
        pulse: 2 ** 40 + i,
        dm: 10 + i / 1e3,
        dmErr: 1e-3,
      });
      rows.push(r);
      t.push(r);
    }
    // 16 → 1024 (the smallest growth) → 1536 → 2304
    expect(t.allocatedRows).toBe(2304);
    const check = () => {
      expect(t.length).toBe(2000);
      rows.forEach((r, i) => {
        expect(t.epoch(i)).toEqual(r.epoch);
        expect(t.mjd(i)).toBe(r.epoch.day + (r.epoch.sec + r.epoch.frac) / 86400);
        expect(t.mjdColumn()[i]).toBe(t.mjd(i));
        expect(t.freqMhz(i)).toBe(r.freqMhz);
        expect(t.errUs(i)).toBe(r.errUs);
        expect(t.residualUs(i)).toBe(r.residualUs);
        expect(t.periodS(i)).toBe(r.periodS);
        expect(t.pulseNumber(i)).toBe(r.pulse);
        expect(t.dmOf(i)).toBe(r.dm);
        expect(t.dmErrOf(i)).toBe(r.dmErr);
        expect(t.row(i)).toBe(r.row);
        expect(t.sources[t.sourceId(i)]).toBe(r.source);
        expect(t.receivers[t.receiverId(i)]).toBe(r.receiver);
      });
    };
    check();
    t.trim();
    expect(t.allocatedRows).toBe(2000);
    check();
    expect(t.mjdDecimals).toBe(12);
  });

  it('missing optional values are NaN (receiver −1); a column a row brings appears for it alone', () => {
    const t = new ToaTable(required, 4);
    t.push(row(0));
    expect(t.residualUs(0)).toBeNaN();
    expect(t.periodS(0)).toBeNaN();
    expect(t.pulseNumber(0)).toBeNaN();
    expect(t.dmOf(0)).toBeNaN();
    expect(t.dmErrOf(0)).toBeNaN();
    expect(t.receiverId(0)).toBe(-1);
    const before = t.allocatedBytes;
    t.push(row(1, { residualUs: 2.5, receiver: 'mid' }));
    expect(t.allocatedBytes).toBe(before + t.allocatedRows * (8 + 2));
    expect([t.residualUs(0), t.residualUs(1)]).toEqual([NaN, 2.5]);
    expect([t.receiverId(0), t.receivers[t.receiverId(1)]]).toEqual([-1, 'mid']);
  });

  it('more than 65 535 sources or receivers widen the id columns without losing any', () => {
    const n = 70_000;
    const t = new ToaTable(residuals, n);
    for (let i = 0; i < n; i++)
      t.push(row(i, { source: `P${i}`, receiver: `R${n - i}`, residualUs: 0 }));
    expect(t.sources).toHaveLength(n);
    expect(t.receivers).toHaveLength(n);
    for (const i of [0, 65_534, 65_535, 65_536, n - 1]) {
      expect(t.sources[t.sourceId(i)]).toBe(`P${i}`);
      expect(t.receivers[t.receiverId(i)]).toBe(`R${n - i}`);
    }
  });

  it('whole seconds are stored as integers: a fractional part moves to frac, the same instant', () => {
    const t = new ToaTable(required, 4);
    t.push(row(0, { epoch: { day: 60000, sec: 10.25, frac: 0.5 } }));
    expect(t.epoch(0)).toEqual({ day: 60000, sec: 10, frac: 0.75 });
    expect(t.mjd(0)).toBe(60000 + 10.75 / 86400);
    expect(() => t.push(row(1, { epoch: { day: 2 ** 31, sec: 0, frac: 0 } }))).toThrow(RangeError);
  });
});
