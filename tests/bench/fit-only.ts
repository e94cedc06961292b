/**
 * "Fit only" timing for `npm run bench` (bundled by tests/bench/run.mjs with esbuild, the CLI's
 * settings, and run by plain node):
 *
 *   node fit-only.mjs TOAS.csv [--repeat N]
 *
 * Loads the CSV with csv-parse/sync and the project's own row validation into a ToaTable (not
 * timed as part of fit_s; load_s is reported for information), then times only
 * fitDmVisits(table, …) with the CLI's defaults (conventional K, visits split at gaps > 0.5 day,
 * no clipping, no evolution terms) — sorting, grouping and fitting every visit, building every
 * visit's record. --repeat passes (default 1: the first pass, JIT warm-up included, as in a CLI
 * run; run.mjs repeats the whole process instead); fit_s is the fastest.
 * Prints one JSON line: { fit_s, fit_runs_s, load_s, n_rows, n_visits }.
 */
import { readFileSync } from 'node:fs';
import { parse } from 'csv-parse/sync';
import { ToaTable } from '../../shared/formats/toa-table.js';
import { checkHeader, parseToaRecord } from '../../shared/formats/toas.js';
import { fitDmVisits, type DmFitOptions } from '../../shared/fit/dm-fit.js';
import { dispersionConstant } from '../../shared/physics/constants.js';

const args = process.argv.slice(2);
let passes = 1;
const r = args.indexOf('--repeat');
if (r >= 0) {
  passes = Number(args[r + 1]);
  args.splice(r, 2);
}
const file = args[0];
if (!file || args.length !== 1 || !(Number.isInteger(passes) && passes >= 1)) {
  process.stderr.write('usage: node fit-only.mjs TOAS.csv [--repeat N]\n');
  process.exit(2);
}

const seconds = (t0: bigint) => Number(process.hrtime.bigint() - t0) / 1e9;

const t0 = process.hrtime.bigint();
const records = parse(readFileSync(file), { skip_empty_lines: true, trim: true }) as string[][];
const header = checkHeader(records[0]);
const table = new ToaTable(header, records.length);
for (let r = 1; r < records.length; r++) {
  const fields = records[r];
  const rec: Record<string, string> = {};
  for (let c = 0; c < header.columns.length; c++) rec[header.columns[c]] = fields[c];
  table.push(parseToaRecord(rec, header, r, r + 1));
}
records.length = 0; // let the parsed strings go before timing the fit
const loadS = seconds(t0);

const opts: DmFitOptions = {
  constant: dispersionConstant('conventional'),
  grouping: { kind: 'gap', gapDays: 0.5 },
  evolution: 0,
};
const runs: number[] = [];
let nVisits = 0;
for (let run = 0; run < passes; run++) {
  const t = process.hrtime.bigint();
  nVisits = fitDmVisits(table, opts).length;
  runs.push(seconds(t));
}

process.stdout.write(
  JSON.stringify({
    fit_s: Math.min(...runs),
    fit_runs_s: runs,
    load_s: loadS,
    n_rows: table.length,
    n_visits: nVisits,
  }) + '\n',
);
