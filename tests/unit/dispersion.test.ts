import { describe, expect, it } from 'vitest';
import { dispersionConstant } from '../../shared/physics/constants.js';
import {
  channelSmearingS,
  delayBetweenS,
  delayToInfinityS,
  dmFromDelay,
} from '../../shared/physics/dispersion.js';

const conventional = dispersionConstant('conventional');
const physical = dispersionConstant('physical');

describe('cold-plasma dispersion', () => {
  it('conventional K is 1/2.41e-4 (common practice)', () => {
    expect(conventional.value).toBeCloseTo(4149.3776, 4);
  });

  it('physical K agrees with the handbook value 4.148808e3 (Lorimer & Kramer 2005, eq. 4.7, from memory) to 4e-7', () => {
    expect(Math.abs(physical.value / 4148.808 - 1)).toBeLessThan(4e-7);
  });

  it('check values of science.md: DM 100, 1400 MHz to infinity', () => {
    expect(delayToInfinityS(conventional, 100, 1400)).toBeCloseTo(0.2117029, 7);
    expect(delayToInfinityS(physical, 100, 1400)).toBeCloseTo(0.2116738, 7);
  });

  it('check value of science.md: DM 30, 400 vs 800 MHz (conventional)', () => {
    expect(delayBetweenS(conventional, 30, 400, 800)).toBeCloseTo(0.5835062, 7);
  });

  it('intra-channel smearing: DM 50, 1 MHz channel at 800 MHz → 810.31 µs (physical K; science.md)', () => {
    expect(channelSmearingS(physical, 50, 800, 1) * 1e6).toBeCloseTo(810.31, 2);
    // the rule of thumb 8.3 µs · DM · Δν_MHz · ν_GHz⁻³ (Lorimer & Kramer 2005, from memory)
    expect(channelSmearingS(physical, 50, 800, 1) * 1e6).toBeCloseTo((8.3 * 50 * 1) / 0.8 ** 3, -1);
  });

  it('inverts a delay back to the DM', () => {
    const d = delayBetweenS(conventional, 12.5, 700, 1500);
    expect(dmFromDelay(conventional, d, 700, 1500)).toBeCloseTo(12.5, 12);
  });
});
