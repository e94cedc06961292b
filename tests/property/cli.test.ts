// End to end: the built CLI (bin/sightline → dist/cli; run `node cli/build.mjs` first) on
// mutated and hostile input files, one group per command that reads files. Whatever the bytes,
// the process exits 0 (valid after all), 1 (a documented failed check: nothing could be fitted)
// or 2 — invalid input (interfaces.md "Exit codes") — and never with an internal error. On exit
// 2, stderr is one line naming the file at fault, stdout is empty, and nothing is left behind at
// --out (no file, no temporary file).
import fc from 'fast-check';
import { existsSync, readdirSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { stringify as toYaml } from 'yaml';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { sightline } from '../helpers/cli.js';
import { dmFit } from '../helpers/results.js';
import {
  check,
  deepArrays,
  mutateAll,
  mutationsArb,
  scratch,
  tried,
  utf8,
  wideHeader,
} from './harness.js';

const FAMILY = 'CLI end to end (spawned process)';
const { dir, write } = scratch('cli');

// ---------------------------------------------------------------------------------------------
// Valid inputs

const K = 4.148808e3; // s MHz² pc⁻¹ cm³ (dispersion constant, common practice)
function toasCsv(): string {
  const lines = ['source,mjd,freq_mhz,err_us,residual_us'];
  for (let v = 0; v < 3; v++)
    for (const [i, f] of [700, 1000, 1400, 2000, 3000].entries()) {
      const dm = 1e-3 * (v + 1);
      lines.push(
        `SBP-A,${60000 + 10 * v}.${1000 + i},${f},0.5,${((K * 1e6 * dm) / f ** 2).toFixed(4)}`,
      );
    }
  return lines.join('\n') + '\n';
}

const pulse = (nbin: number, at: number, w: number, tauBins: number) =>
  Array.from({ length: nbin }, (_, i) => {
    let s = 0;
    for (let k = 0; k < 40; k++)
      s += Math.exp(-0.5 * ((i - at - k) / w) ** 2) * Math.exp(-k / tauBins);
    return 10 * s + 0.1 * Math.sin(7 * i);
  });

function profilesJson(): string {
  return JSON.stringify({
    source: 'SBP-D',
    mjd: '60000.5',
    period_s: 0.005,
    profiles: [
      { freq_mhz: 700, bins: pulse(64, 20, 2, 4), noise: 0.1 },
      { freq_mhz: 1400, bins: pulse(64, 20, 2, 1), noise: 0.1 },
    ],
  });
}

function cubeJson(): string {
  const freqs = [1200, 1300, 1400, 1500, 1600, 1700, 1800, 1900];
  return JSON.stringify({
    source: 'SBP-C',
    mjd: '60000.5',
    period_s: 0.005,
    dm: 10,
    profiles: freqs.map((f) => ({ freq_mhz: f, bins: pulse(64, 30, 2, 0.5), noise: 0.1 })),
  });
}

function dynspec(): { npy: Uint8Array; sidecar: string } {
  const nchan = 16;
  const nsub = 16;
  const values = Array.from(
    { length: nchan * nsub },
    (_, k) => 1 + Math.sin(k * 0.37) * Math.cos(k * 0.11),
  );
  return {
    npy: writeNpy(values, [nchan, nsub], '<f4'),
    sidecar: JSON.stringify({
      source: 'SBP-B',
      mjd: '60000.5',
      freqs_mhz: { start: 1400, step: 1 },
      times_s: { start: 0, step: 10 },
    }),
  };
}

const MANIFEST = toYaml({
  out: 'results',
  jobs: [{ analysis: 'dm-fit', input: 'toas.csv' }],
});

// ---------------------------------------------------------------------------------------------
// Running the CLI and checking the outcome

interface Case {
  /** the file that is mutated (named in stderr on exit 2) */
  file: string;
  /** further files the command reads, that an error may name instead */
  also?: string[];
  args: string[];
  /** whether --out applies (commands writing one output) */
  out?: boolean;
  /** a folder that must not appear on exit 2 (batch results) */
  noDir?: string;
}

let runNo = 0;
function runCase(c: Case): number {
  tried(FAMILY);
  const out = join(dir, `out-${++runNo}.json`);
  if (c.noDir) rmSync(c.noDir, { recursive: true, force: true });
  const r = sightline([...c.args, '--quiet', ...(c.out === false ? [] : ['--out', out])]);
  const where = `${c.args.join(' ')} → exit ${r.code}: ${r.stderr.slice(0, 400)}`;
  expect([0, 1, 2], where).toContain(r.code);
  expect(r.stderr, where).not.toMatch(
    /internal error|RangeError|TypeError|ReferenceError|at .*\.js:\d+/,
  );
  if (r.code === 2) {
    const lines = r.stderr.trim().split('\n');
    expect(lines, where).toHaveLength(1);
    expect(lines[0].length, where).toBeLessThanOrEqual(520); // "sightline: " + ≤ 500
    expect(
      [c.file, ...(c.also ?? [])].some((f) => lines[0].includes(f)),
      where,
    ).toBe(true);
    expect(r.stdout, where).toBe('');
    expect(existsSync(out), where).toBe(false);
    if (c.noDir) expect(existsSync(c.noDir), where).toBe(false);
  }
  // an atomic write leaves no temporary file, whatever happened
  expect(
    readdirSync(dir).filter((f) => f.includes('.tmp')),
    where,
  ).toEqual([]);
  return r.code;
}

/** `runs` mutated versions of `valid` written to `name`, each run through `args`. */
async function mutatedRuns(
  name: string,
  valid: string | Uint8Array,
  make: (file: string) => Case,
  runs: number,
) {
  const bytes = typeof valid === 'string' ? utf8(valid) : valid;
  await check(
    fc.asyncProperty(mutationsArb, async (ms) => {
      const file = write(name, mutateAll(bytes, ms));
      runCase(make(file));
    }),
    runs,
  );
}

/** Hostile versions that must be refused with exit 2. */
function refused(name: string, texts: (string | Uint8Array)[], make: (file: string) => Case) {
  for (const t of texts) {
    const file = write(name, t);
    expect(runCase(make(file)), `${name}: ${String(t).slice(0, 60)}`).toBe(2);
  }
}

const TRUNCATE = (s: string) => s.slice(0, Math.floor(s.length / 2));

describe('the built CLI on mutated and hostile inputs', () => {
  it('dm fit and dm series (arrival-time CSV, NDJSON)', async () => {
    const csv = toasCsv();
    expect(
      runCase({ file: write('toas.csv', csv), args: ['dm', 'fit', join(dir, 'toas.csv')] }),
    ).toBe(0);
    await mutatedRuns('m.csv', csv, (f) => ({ file: f, args: ['dm', 'fit', f, '--json'] }), 3);
    await mutatedRuns('s.csv', csv, (f) => ({ file: f, args: ['dm', 'series', f, '--json'] }), 1);
    refused(
      'h.csv',
      [
        TRUNCATE(csv).replace(/,[^,\n]*$/, ',x'),
        `${wideHeader(1_000_000, ['source', 'mjd', 'freq_mhz', 'err_us'])}\nX,60000.1,700,1\n`,
        `source,mjd,freq_mhz,err_us\nX,60000.1,${'9'.repeat(1 << 20)}x,1\n`,
        '\uFEFF\uFEFF\0\0garbage',
      ],
      (f) => ({ file: f, args: ['dm', 'fit', f] }),
    );
    refused(
      'h.ndjson',
      [`${deepArrays(100_000)}\n`, '{"source":"X","mjd":["60000.1"],"freq_mhz":700,"err_us":1}\n'],
      (f) => ({ file: f, args: ['dm', 'fit', f] }),
    );
  });

  it('toas correct (the table, and the series file)', async () => {
    const csv = write('c.csv', toasCsv());
    const series = join(dir, 'series.json');
    expect(sightline(['dm', 'series', csv, '--json', '--quiet', '--out', series]).code).toBe(0);
    await mutatedRuns(
      'mc.csv',
      toasCsv(),
      (f) => ({ file: f, args: ['toas', 'correct', f, '--series', series] }),
      1,
    );
    refused('hc.csv', [TRUNCATE(toasCsv()).replace(/,[^,\n]*$/, ',x')], (f) => ({
      file: f,
      args: ['toas', 'correct', f, '--series', series],
    }));
  });

  it('scatter fit (profiles JSON)', async () => {
    const json = profilesJson();
    expect([0, 1]).toContain(
      runCase({ file: write('p.json', json), args: ['scatter', 'fit', join(dir, 'p.json')] }),
    );
    await mutatedRuns(
      'mp.json',
      json,
      (f) => ({ file: f, args: ['scatter', 'fit', f, '--json'] }),
      2,
    );
    refused(
      'hp.json',
      [TRUNCATE(json), deepArrays(100_000), json.replace('"bins":[', '"bins":[NaN,')],
      (f) => ({
        file: f,
        args: ['scatter', 'fit', f],
      }),
    );
  });

  it('scint analyse (.npy with sidecar, and CSV)', async () => {
    const { npy, sidecar } = dynspec();
    const meta = write('d.npy.json', sidecar);
    expect([0, 1]).toContain(
      runCase({ file: write('d.npy', npy), args: ['scint', 'analyse', join(dir, 'd.npy')] }),
    );
    await mutatedRuns(
      'd.npy',
      npy,
      (f) => ({ file: f, also: [meta], args: ['scint', 'analyse', f, '--json'] }),
      2,
    );
    write('d.npy', npy);
    await mutatedRuns(
      'd.npy.json',
      sidecar,
      (f) => ({
        file: f,
        also: [join(dir, 'd.npy')],
        args: ['scint', 'analyse', join(dir, 'd.npy'), '--json'],
      }),
      2,
    );
    refused(
      'hd.csv',
      [
        `${wideHeader(2000, ['freq_mhz', 'time_s', 'intensity'])}\n1,2,3\n`,
        `freq_mhz,time_s,intensity\n${Array.from({ length: 5000 }, (_, i) => `${1000 + i * 0.37},${i * 1.13},1`).join('\n')}\n`,
      ],
      (f) => ({ file: f, args: ['scint', 'analyse', f] }),
    );
  });

  it('dm refine (profile cube)', async () => {
    const json = cubeJson();
    await mutatedRuns(
      'cube.json',
      json,
      (f) => ({ file: f, args: ['dm', 'refine', f, '--range', '9.9:10.1:0.01', '--json'] }),
      2,
    );
    refused('hcube.json', [TRUNCATE(json), deepArrays(100_000)], (f) => ({
      file: f,
      args: ['dm', 'refine', f, '--range', '9.9:10.1:0.01'],
    }));
  });

  it('batch (manifests): nothing runs, no results folder', async () => {
    write('toas.csv', toasCsv());
    const results = join(dir, 'results');
    await mutatedRuns(
      'batch.yaml',
      MANIFEST,
      (f) => ({ file: f, args: ['batch', f], out: false, noDir: results }),
      2,
    );
    const levels = ['a: &a [x, x, x, x, x, x, x, x, x]'];
    for (let k = 1; k < 9; k++)
      levels.push(
        `${String.fromCharCode(97 + k)}: &${String.fromCharCode(97 + k)} [${new Array(9).fill(`*${String.fromCharCode(96 + k)}`).join(', ')}]`,
      );
    refused(
      'hb.yaml',
      [
        `${levels.join('\n')}\njobs: *i\n`,
        `jobs:\n${'- '.repeat(10_000)}x\n`,
        `jobs: ${deepArrays(100_000)}\n`,
      ],
      (f) => ({ file: f, args: ['batch', f], out: false, noDir: results }),
    );
    refused('hb.json', ['{"jobs": [}', deepArrays(100_000)], (f) => ({
      file: f,
      args: ['batch', f],
      out: false,
      noDir: results,
    }));
  });

  it('baseline check and runs push (result files): refused before any network use', async () => {
    const result = JSON.stringify(dmFit('SBP-A', [{ mjd: 60000, dm: 10, dm_err: 0.1 }]));
    const server = ['--server', 'http://127.0.0.1:9', '--token', 'x'];
    refused(
      'r.json',
      [TRUNCATE(result), deepArrays(100_000), result.replace('"dm":10', '"dm":"ten"')],
      (f) => ({
        file: f,
        args: ['baseline', 'check', f, ...server],
      }),
    );
    refused('rp.json', [TRUNCATE(result)], (f) => ({
      file: f,
      args: ['runs', 'push', f, ...server],
      out: false,
    }));
  });
});
