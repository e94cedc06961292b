import { afterAll, describe, expect, it } from 'vitest';
import { createWriteStream, existsSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { sightline, tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const HEADER = 'source,mjd,freq_mhz,err_us,residual_us';
const GOOD = ['X,60000.1,700,1,5', 'X,60000.1001,1400,1,2', 'X,60000.1002,2000,1,1'];

/** Run dm fit on a file with --out; the run must fail with exit 2, name the place, and leave no file. */
function expectRejected(name: string, text: string, message: RegExp) {
  const file = join(dir, name);
  writeFileSync(file, text);
  const out = join(dir, `${name}.out.json`);
  const r = sightline(['dm', 'fit', file, '--json', '--out', out]);
  expect(r.code, r.stderr).toBe(2);
  expect(r.stdout).toBe('');
  expect(r.stderr.trim().split('\n')).toHaveLength(1);
  expect(r.stderr).toMatch(message);
  expect(existsSync(out)).toBe(false);
  expect(readdirSync(dir).filter((f) => f.includes('.tmp'))).toEqual([]);
}

describe('bad input: a clear message with file, row and column, exit 2, nothing written', () => {
  it('missing column', () => {
    expectRejected(
      'missing.csv',
      'source,mjd,err_us\nX,60000.1,1\n',
      /missing\.csv: line 1: column "freq_mhz": missing required column "freq_mhz"/,
    );
  });
  it('non-numeric field', () => {
    expectRejected(
      'text.csv',
      [HEADER, ...GOOD, 'X,60000.1003,abc,1,1'].join('\n'),
      /text\.csv: row 4, line 5: column "freq_mhz": "abc" is not a finite number/,
    );
  });
  it('NaN and Inf', () => {
    expectRejected(
      'nan.csv',
      [HEADER, 'X,60000.1,700,NaN,5', ...GOOD].join('\n'),
      /row 1, line 2: column "err_us": "NaN" is not a finite number/,
    );
    expectRejected(
      'inf.csv',
      [HEADER, ...GOOD, 'X,60000.1003,800,1,Infinity'].join('\n'),
      /row 4, line 5: column "residual_us": "Infinity" is not a finite number/,
    );
  });
  it('frequency ≤ 0', () => {
    expectRejected(
      'freq.csv',
      [HEADER, GOOD[0], 'X,60000.1001,0,1,2'].join('\n'),
      /row 2, line 3: column "freq_mhz": 0 is not a positive frequency/,
    );
  });
  it('error ≤ 0', () => {
    expectRejected(
      'err.csv',
      [HEADER, GOOD[0], 'X,60000.1001,1400,-0.5,2'].join('\n'),
      /row 2, line 3: column "err_us": -0.5 is not a positive uncertainty/,
    );
  });
  it('empty file, and a header without rows', () => {
    expectRejected('empty.csv', '', /empty\.csv: the file is empty/);
    expectRejected(
      'header-only.csv',
      HEADER + '\n',
      /header-only\.csv: the file has a header but no data rows/,
    );
  });
  it('wrong delimiter', () => {
    expectRejected(
      'semi.csv',
      'source;mjd;freq_mhz;err_us\nX;60000.1;700;1\n',
      /semi\.csv: line 1: the header is one field containing semicolons/,
    );
  });
  it('duplicated header: a column named twice, and a header line repeated inside the file', () => {
    expectRejected(
      'dupcol.csv',
      'source,mjd,freq_mhz,err_us,freq_mhz\nX,60000.1,700,1,800\n',
      /line 1: column "freq_mhz": the header names column "freq_mhz" twice/,
    );
    expectRejected(
      'dupline.csv',
      [HEADER, ...GOOD, HEADER, ...GOOD].join('\n'),
      /row 4, line 5: this row repeats the header/,
    );
  });
  it('a row with too many fields, an MJD that is not decimal, broken JSON', () => {
    expectRejected(
      'fields.csv',
      [HEADER, GOOD[0], 'X,60000.2,800,1,2,9'].join('\n'),
      /row 2, line 3: 6 fields where the header has 5/,
    );
    expectRejected(
      'mjd.csv',
      [HEADER, 'X,6e4,700,1,5'].join('\n'),
      /row 1, line 2: column "mjd": "6e4" is not a decimal MJD/,
    );
    expectRejected(
      'broken.ndjson',
      '{"source":"X","mjd":"60000.1","freq_mhz":700,"err_us":1}\n{"source":"X",\n',
      /broken\.ndjson: row 2, line 2: not valid JSON/,
    );
  });
  it('a missing input file is an I/O failure (exit 3)', () => {
    const r = sightline(['dm', 'fit', join(dir, 'nope.csv')]);
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/nope\.csv: no such file or directory/);
  });
});

describe('a 10⁶-row file streams through in bounded memory', () => {
  const big = join(dir, 'big.csv');
  const bad = join(dir, 'big-bad.csv');

  async function writeBig(path: string, badLast: boolean) {
    const stream = createWriteStream(path);
    const write = (s: string) =>
      new Promise<void>((resolve) => (stream.write(s) ? resolve() : stream.once('drain', resolve)));
    await write(HEADER + '\n');
    const freqs = [600, 750, 900, 1200, 1400, 1600, 2200, 2800, 3300, 1000];
    let chunk = '';
    for (let i = 0; i < 1_000_000; i++) {
      // 1000 visits of 1000 arrival times, visits 1 day apart, 50 ms between arrivals
      const visit = Math.floor(i / 1000);
      const within = i % 1000;
      const f = freqs[i % 10];
      chunk += `BIG,${60000 + visit}.${String(100000 + within * 58).padStart(9, '0')},${f},1,${((4149.38 * 1e6 * 1e-3) / (f * f)).toFixed(4)}\n`;
      if (chunk.length > 1 << 20) {
        await write(chunk);
        chunk = '';
      }
    }
    if (badLast) chunk += 'BIG,61000.5,1400,0,1\n';
    await write(chunk);
    await new Promise<void>((resolve) => stream.end(resolve));
  }

  // typed arrays live outside the V8 heap, so this shows no per-row JavaScript objects are kept;
  // total memory is reported by npm run bench
  it('fits 10⁶ rows within a 64 MB JavaScript heap (no per-row objects)', async () => {
    await writeBig(big, false);
    const r = sightline(['dm', 'fit', big, '--format', 'csv', '--quiet'], {
      nodeOptions: '--max-old-space-size=64',
    });
    expect(r.code, r.stderr).toBe(0);
    const lines = r.stdout.trim().split('\n');
    expect(lines).toHaveLength(1001);
    expect(Number(lines[1].split(',')[7])).toBeCloseTo(1e-3, 6);
  });

  it('a bad last row of 10⁶ is named by row and line, exit 2, no output file', async () => {
    await writeBig(bad, true);
    const out = join(dir, 'big.out.json');
    const r = sightline(['dm', 'fit', bad, '--json', '--out', out], {
      nodeOptions: '--max-old-space-size=64',
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(
      /big-bad\.csv: row 1000001, line 1000002: column "err_us": 0 is not a positive uncertainty/,
    );
    expect(existsSync(out)).toBe(false);
  });
});

describe('time precision through the command line (science.md)', () => {
  it('two arrival times 1 ns apart at MJD 60000 stay 1 ns apart through parse → fit → output', () => {
    // 1 ns = 1.157407407…e-14 day
    const file = join(dir, 'ns.csv');
    writeFileSync(
      file,
      [
        HEADER,
        'X,60000.123456789012345678,700,1,5',
        'X,60000.123456789012357252,700,1,5',
        'X,60000.1235,1400,1,2',
        'X,60000.1236,2000,1,1',
      ].join('\n') + '\n',
    );
    const seriesPath = join(dir, 'ns-series.json');
    expect(sightline(['dm', 'series', file, '--json', '--out', seriesPath]).code).toBe(0);
    const r = sightline(['toas', 'correct', file, '--series', seriesPath]);
    expect(r.code, r.stderr).toBe(0);
    const rows = r.stdout
      .trim()
      .split('\n')
      .slice(1)
      .map((l) => l.split(','));
    const mjdCorrected = rows.map((f) => f[f.length - 2]);
    // exact decimal difference of the written epochs, in ns (BigInt on the digits)
    const [a, b] = mjdCorrected.slice(0, 2).map((t) => {
      const [day, frac] = t.split('.');
      return BigInt(day) * 10n ** 24n + BigInt(frac.padEnd(24, '0').slice(0, 24));
    });
    const diffNs = (Number(b - a) / 1e24) * 86400 * 1e9;
    expect(Math.abs(diffNs - 1)).toBeLessThan(1e-3);
    // the input text itself is written back unchanged
    expect(rows[1][1]).toBe('60000.123456789012357252');
  });
});
