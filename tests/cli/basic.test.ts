import { describe, expect, it } from 'vitest';
import { delayResultSchema } from '../../shared/schemas/delay.js';
import { solarResultSchema } from '../../shared/schemas/solar.js';
import { sightline } from '../helpers/cli.js';

describe('sightline delay', () => {
  it('prints the science.md check values and records the constant (conventional by default)', () => {
    const r = sightline(['delay', '--dm', '30', '--freq', '400', '--ref', '800', '--json']);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    const out = delayResultSchema.parse(JSON.parse(r.stdout));
    expect(out.constant.name).toBe('conventional');
    expect(out.rows[0].delay_s).toBeCloseTo(0.5835062, 7);
    expect(out.rows[0].ref_mhz).toBe(800);
  });

  it('physical constant, infinite reference and channel smearing', () => {
    const r = sightline([
      'delay',
      '--dm',
      '100',
      '--freq',
      '1400,800',
      '--constant',
      'physical',
      '--channel-width',
      '1',
      '--json',
    ]);
    const out = delayResultSchema.parse(JSON.parse(r.stdout));
    expect(out.constant.name).toBe('physical');
    expect(out.rows[0].ref_mhz).toBeNull();
    expect(out.rows[0].delay_s).toBeCloseTo(0.2116738, 7);
    expect(out.rows[1].smearing_s! * 1e6).toBeCloseTo(2 * 810.31, 1); // DM 100 = twice the DM 50 check value
  });

  it('writes CSV and a readable table', () => {
    const csv = sightline(['delay', '--dm', '100', '--freq', '1400', '--format', 'csv']);
    expect(csv.stdout.trim().split('\n')).toEqual([
      'freq_mhz,ref_mhz,delay_s',
      '1400,inf,0.2117029384367855',
    ]);
    const table = sightline(['delay', '--dm', '100', '--freq', '1400']);
    expect(table.stdout).toMatch(/conventional \(K = 4149\.3776/);
    expect(table.stdout).toMatch(/211\.703/);
  });

  it('exits 2 with a message naming the option for bad values', () => {
    for (const args of [
      ['delay', '--dm', 'abc', '--freq', '1400'],
      ['delay', '--dm', '10', '--freq', '-5'],
      ['delay', '--dm', '10'],
      ['delay', '--dm', '10', '--freq', '1400', '--constant', 'other'],
      ['no-such-command'],
    ]) {
      const r = sightline(args);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.stdout).toBe('');
      expect(r.stderr.length).toBeGreaterThan(0);
    }
    expect(sightline(['delay', '--dm', 'abc', '--freq', '1400']).stderr).toMatch(
      /--dm: "abc" is not a finite number/,
    );
  });
});

describe('sightline solar', () => {
  it('gives the spherical-wind DM with elongation and distance (astronomy-engine Sun)', () => {
    const r = sightline([
      'solar',
      '--ra',
      '61.2',
      '--dec',
      '-12.4',
      '--mjd',
      '60440',
      '--n0',
      '8',
      '--json',
    ]);
    expect(r.code).toBe(0);
    const out = solarResultSchema.parse(JSON.parse(r.stdout));
    expect(out.elongation_deg).toBeGreaterThan(30);
    expect(out.elongation_deg).toBeLessThan(36);
    expect(out.dm).toBeGreaterThan(1.5e-4);
    expect(out.dm).toBeLessThan(2.2e-4);
  });
});

describe('help and version', () => {
  it('every command has help with an example', () => {
    for (const cmd of [
      ['delay'],
      ['solar'],
      ['dm', 'fit'],
      ['dm', 'series'],
      ['toas', 'correct'],
      ['demo', 'generate'],
    ]) {
      const r = sightline([...cmd, '--help']);
      expect(r.code, cmd.join(' ')).toBe(0);
      expect(r.stdout, cmd.join(' ')).toMatch(/Examples?:\n\s+sightline /);
    }
    expect(sightline(['--help']).stdout).toMatch(
      /Exit codes: 0 success · 1 a check failed · 2 usage error/,
    );
  });

  it('prints the version', () => {
    expect(sightline(['--version']).stdout.trim()).toMatch(/^\d+\.\d+\.\d+/);
  });
});
