import { describe, expect, it } from 'vitest';
import {
  addSeconds,
  diffSeconds,
  formatMjd,
  parseMjd,
  toMjdNumber,
} from '../../shared/time/mjd.js';

describe('exact MJD epochs', () => {
  it('keeps two arrival times 1 ns apart at MJD 60000 exactly 1 ns apart (science.md, time precision)', () => {
    // 1 ns = 1e-9 / 86400 day = 1.1574074074…e-14 day; written with 20 decimals
    const a = parseMjd('60000.12345678901234567890');
    const b = parseMjd('60000.12345678901235725297');
    const dt = diffSeconds(b, a);
    expect(Math.abs(dt - 1e-9)).toBeLessThan(1e-15);
    // a single double could not: its spacing at 60000 is 7.3e-12 day = 0.63 µs
    expect(Number('60000.12345678901235725297') - Number('60000.12345678901234567890')).toBe(0);
  });

  it('round-trips decimal text through format', () => {
    for (const t of [
      '60000.000000000000000',
      '60000.5',
      '59999.999999999999999',
      '61300.123456789012345',
    ]) {
      const d = t.split('.')[1].length;
      expect(formatMjd(parseMjd(t), d)).toBe(t);
    }
  });

  it('adds seconds across a day boundary without losing nanoseconds', () => {
    const a = parseMjd('60000.99999999999');
    const b = addSeconds(a, 0.01);
    expect(b.day).toBe(60001);
    expect(diffSeconds(b, a)).toBeCloseTo(0.01, 12);
    expect(formatMjd(addSeconds(parseMjd('60000.5'), 1e-9), 18)).toBe('60000.500000000000011574');
  });

  it('rejects text that is not a decimal MJD', () => {
    for (const bad of ['', 'abc', '6e4', '60000.1.2', '-1', 'NaN', '0x10'])
      expect(() => parseMjd(bad)).toThrow();
  });

  it('quotes at most 40 characters of bad text, on one line', () => {
    for (const bad of [
      '1'.repeat(1 << 20),
      `6x${'0'.repeat(1 << 20)}`,
      `-${'5'.repeat(1000)}`,
      'a\nb',
    ]) {
      let message = '';
      try {
        parseMjd(bad);
      } catch (e) {
        message = (e as Error).message;
      }
      expect(message).toMatch(/out of range|not a decimal MJD|negative/);
      expect(message.length).toBeLessThan(160);
      expect(message).not.toMatch(/\n/);
    }
    expect(() => parseMjd('1'.repeat(50))).toThrow(/"1{40}…" \(50 characters\) is out of range/);
  });

  it('gives an approximate double for grouping', () => {
    expect(toMjdNumber(parseMjd('60000.25'))).toBe(60000.25);
  });
});
