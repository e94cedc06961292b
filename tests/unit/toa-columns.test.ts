import { describe, expect, it } from 'vitest';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { InputError } from '../../shared/formats/errors.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
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
