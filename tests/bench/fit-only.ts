/**
 * "Fit only" timing for `npm run bench` (run by tests/bench/run.mjs through `npx tsx`):
 *
 *   npx tsx tests/bench/fit-only.ts TOAS.csv
 *
 * Loads the CSV with csv-parse/sync and the project's own row validation into a ToaTable (not
 * timed as part of fit_s; load_s is reported for information), then times only
 * fitDmVisits(table, …) with the CLI's defaults (conventional K, visits split at gaps > 0.5 day,
 * no clipping, no evolution terms) — sorting, grouping and fitting every visit. Best of 3 runs.
 * Prints one JSON line: { fit_s, fit_runs_s, load_s, n_rows, n_visits }.
 */
import { readFileSync } from 'node:fs';
import { parse } from 'csv-parse/sync';
import { ToaTable } from '../../shared/formats/toa-table.js';
import { checkHeader, parseToaRecord } from '../../shared/formats/toas.js';
import { fitDmVisits, type DmFitOptions } from '../../shared/fit/dm-fit.js';
import { dispersionConstant } from '../../shared/physics/constants.js';

const file = process.argv[2];
if (!file) {
  process.stderr.write('usage: npx tsx tests/bench/fit-only.ts TOAS.csv\n');
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
for (let run = 0; run < 3; run++) {
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
