// `dm fit` streams its visits through a temporary file (cli/io/output.ts LineSpill) and writes
// JSON and CSV piece by piece; `toas correct` writes its numbers through a quicker text path.
// The reference for each is the way the same output was made before, all in memory: render.ts
// `json` / `csv` of the whole result, and String(Number(x.toPrecision(12))).
import fc from 'fast-check';
import { stringify } from 'csv-stringify/sync';
import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runDmFit, runDmSeries, runFitCommand, runSeriesCommand } from '../../cli/run/dm.js';
import { text12 } from '../../cli/run/toas.js';
import { LineSpill } from '../../cli/io/output.js';
import { csv, json } from '../../cli/render.js';
import { dmFitRows, seriesRows } from '../../shared/review/rows.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit, type SimToa } from '../../shared/sim/visits.js';
import { tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir('sightline-dm-output-');
afterAll(cleanup);

/** A residual table of two invented pulsars, 12 visits each, three receivers, one outlier. */
function table(): string {
  const k = dispersionConstant('conventional');
  const rng = createRng(77);
  const toas: SimToa[] = [];
  const freqs = [600, 700, 800, 1200, 1400, 1600, 2200, 2800, 3300];
  const receivers = freqs.map((f) => (f < 1000 ? 'low' : f < 2000 ? 'mid' : 'high'));
  for (const source of ['SBP-A', 'SBP-C'])
    for (let v = 0; v < 12; v++)
      toas.push(
        ...simulateResidualVisit(
          k,
          {
            source,
            startMjd: 60300.3 + 14 * v + (source === 'SBP-C' ? 0.2 : 0),
            ddm: 3e-4 * Math.sin(v),
            freqsMhz: freqs,
            errUs: freqs.map(() => 0.7),
            receivers,
            receiverOffsetsUs: { low: 0.5, mid: -0.2, high: 0.1 },
          },
          rng,
        ),
      );
  toas[5].residual_us += 40; // clipped with --clip, so flagged_rows is not empty
  const path = join(dir, 'toas.csv');
  writeFileSync(path, stringify(toas, { header: true }));
  return path;
}

const withoutTime = (text: string) => text.replace(/"created_utc": "[^"]*"/, '');

describe('dm fit through the spill file writes what the in-memory result renders to', () => {
  const file = table();
  const base = { evolution: 0, quiet: true, clip: 4 };
  for (const [what, extra] of [
    ['DM only', {}],
    ['chromatic (scattering term, α fixed)', { scatter: 'fixed' as const }],
  ] as const) {
    it(`${what}: --json and --format csv`, async () => {
      const o = { ...base, ...extra };
      const r = await runDmFit(file, o);
      expect(r.visits.some((v) => v.flagged_rows.length > 0)).toBe(true);
      if ('scatter' in extra) expect(r.visits.some((v) => v.tau_ref_us !== undefined)).toBe(true);
      const jsonOut = join(dir, 'fit.json');
      await runFitCommand(file, { ...o, json: true, out: jsonOut });
      expect(withoutTime(readFileSync(jsonOut, 'utf8'))).toBe(withoutTime(json(r)));
      const csvOut = join(dir, 'fit.csv');
      await runFitCommand(file, { ...o, format: 'csv', out: csvOut });
      const { head, rows } = dmFitRows(r);
      expect(readFileSync(csvOut, 'utf8')).toBe(csv(head, rows));
    });
  }

  it('leaves no spill file behind', () => {
    expect(
      readdirSync(tmpdir()).filter((f) => f.startsWith(`sightline-spill-${process.pid}-`)),
    ).toEqual([]);
  });
});

describe('dm series writes CSV in pieces, the same as in one string', () => {
  it('--format csv', async () => {
    const file = table();
    const o = { evolution: 0, quiet: true, smooth: 'none' as const };
    const r = await runDmSeries(file, o);
    const out = join(dir, 'series.csv');
    await runSeriesCommand(file, { ...o, format: 'csv', out });
    const { head, rows } = seriesRows(r);
    expect(readFileSync(out, 'utf8')).toBe(csv(head, rows));
  });
});

describe('LineSpill', () => {
  it('gives back every line in order, characters cut at its block edges included, then goes', () => {
    const spill = new LineSpill(dir);
    const lines: string[] = [];
    // ~3 MB of lines with two-, three- and four-byte characters, so the 1 MB blocks it reads
    // back cut some of them
    for (let i = 0; i < 60_000; i++) lines.push(`${i} ν=${i % 97} 日本 😀 ${'x'.repeat(i % 13)}`);
    lines.push('');
    lines.push('last');
    for (const l of lines) spill.push(l);
    expect([...spill.lines()]).toEqual(lines);
    const files = readdirSync(dir).filter((f) => f.startsWith('sightline-spill-'));
    expect(files).toHaveLength(1);
    spill.remove();
    expect(existsSync(join(dir, files[0]))).toBe(false);
  });
});

describe('text12: the 12-significant-digit text of a correction', () => {
  const reference = (x: number) => String(Number(x.toPrecision(12)));
  it('equals String(Number(x.toPrecision(12))) for any double', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: false }), (x) => {
        expect(text12(x)).toBe(reference(x));
      }),
      { numRuns: 20_000 },
    );
  });
  it('at the edges: zeros, powers of ten, rounding carries, notation changes', () => {
    const edge = [
      0,
      -0,
      1,
      -1,
      10,
      0.1,
      1e-6,
      9.99999999999949e-7,
      1e-7,
      1.5e-7,
      999999999999.4,
      999999999999.5,
      1e12,
      1e21,
      123.456,
      -0.53789341484,
      0.999999999999951,
      5e-324,
      1.7976931348623157e308,
      NaN,
      Infinity,
      -Infinity,
    ];
    for (const x of edge) expect(text12(x), String(x)).toBe(reference(x));
  });
});
