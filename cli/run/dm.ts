import { readFileSync } from 'node:fs';
import { stringify } from 'csv-stringify/sync';
import { forEachDmVisit, type DmFitOptions, type VisitFit } from '../../shared/fit/dm-fit.js';
import { dmFitResultSchema, type DmFitResult } from '../../shared/schemas/dm-fit.js';
import { dmSeriesResultSchema, type DmSeriesResult } from '../../shared/schemas/dm-series.js';
import { buildDmSeries, type Position, type SeriesVisit } from '../../shared/series/dm-series.js';
import { SOLAR_MODEL } from '../../shared/solar/solar-wind.js';
import { InputError } from '../../shared/formats/errors.js';
import {
  CAUTION,
  constantOf,
  formatOf,
  note,
  SOFTWARE,
  withProgress,
  type CommonOptions,
} from '../common.js';
import { checkFailed, usageError } from '../errors.js';
import { readToaTable } from '../io/read-toas.js';
import { LineSpill, writeOutput } from '../io/output.js';
import {
  CHROMATIC_COLUMNS,
  dmFitRows,
  FIT_COLUMNS,
  seriesRows,
  type Cell,
} from '../../shared/review/rows.js';
import { csv, fmt, jsonChunks, table } from '../render.js';

export interface FitCliOptions extends CommonOptions {
  gap?: number;
  window?: number;
  windowStart?: number;
  periodS?: number;
  clip?: number;
  evolution: number;
  strict?: boolean;
  scatter?: 'none' | 'fixed' | 'free';
  alpha?: number;
  refFreq?: number;
  /** what results and errors call FILE (default FILE; the server passes the upload's name) */
  inputName?: string;
}

function fitOptions(o: FitCliOptions): DmFitOptions {
  if (o.gap !== undefined && o.window !== undefined)
    throw usageError('give either --gap or --window, not both');
  if (
    (o.alpha !== undefined || (o.refFreq !== undefined && o.refFreq !== 1000)) &&
    (o.scatter ?? 'none') === 'none'
  ) {
    throw usageError(
      '--alpha and --ref-freq describe the scattering term: add --scatter fixed or --scatter free',
    );
  }
  return {
    constant: constantOf(o),
    grouping:
      o.window !== undefined
        ? { kind: 'window', windowDays: o.window, startMjd: o.windowStart ?? 0 }
        : { kind: 'gap', gapDays: o.gap ?? 0.5 },
    periodS: o.periodS,
    clipSigma: o.clip,
    evolution: o.evolution,
    scatter: o.scatter ?? 'none',
    alpha: o.alpha,
    refFreqMhz: o.refFreq,
  };
}

/** A fit result without its visits: what is known once every visit has been handed on. */
export type DmFitHead = Omit<DmFitResult, 'visits'>;

/**
 * Read the table and fit its visits, handing each visit to `onVisit` as it is made (in memory
 * for `runDmFit`; to a temporary file for `dm fit`, whose visits can outnumber memory). The
 * table is let go when this returns.
 */
async function fitEachVisit(
  file: string,
  o: FitCliOptions,
  onVisit: (v: VisitFit) => void,
): Promise<DmFitHead> {
  const opts = fitOptions(o);
  const name = o.inputName ?? file;
  const { table: t, summary } = await withProgress(o, `reading ${name}`, () =>
    readToaTable(file, name),
  );
  let nVisits = 0;
  let fitted = 0;
  let warnings = 0;
  await withProgress(o, `fitting ${t.length} arrival times`, async () => {
    try {
      forEachDmVisit(t, opts, (v) => {
        nVisits++;
        if (v.status === 'fitted') fitted++;
        warnings += v.warnings.length;
        onVisit(v);
      });
    } catch (e) {
      throw e instanceof InputError ? e.inFile(name) : e;
    }
  });
  // typed by the shared schema; the tests validate outputs with it (a zod pass here would copy
  // 10⁵ visits for nothing)
  return {
    schema: 'sightline/dm-fit@1',
    software: SOFTWARE,
    created_utc: new Date().toISOString(),
    constant: opts.constant,
    parameters: {
      grouping:
        opts.grouping.kind === 'gap'
          ? { kind: 'gap', gap_days: opts.grouping.gapDays }
          : {
              kind: 'window',
              window_days: opts.grouping.windowDays,
              start_mjd: opts.grouping.startMjd,
            },
      period_s: opts.periodS ?? null,
      clip_sigma: opts.clipSigma ?? null,
      evolution: opts.evolution,
      scatter: opts.scatter,
      alpha: opts.scatter === 'none' ? null : (opts.alpha ?? 4.4),
      ref_freq_mhz: opts.scatter === 'none' ? null : (opts.refFreqMhz ?? 1000),
      mode: t.header.hasResidual ? 'residuals' : 'arrival_times',
      receiver_offsets: t.header.hasReceiver,
    },
    input: [{ path: name, sha256: summary.sha256, rows: summary.rows }],
    cautions: [CAUTION],
    summary: {
      n_visits: nVisits,
      n_fitted: fitted,
      n_unconstrained: nVisits - fitted,
      n_warnings: warnings,
    },
  };
}

export async function runDmFit(file: string, o: FitCliOptions): Promise<DmFitResult> {
  const visits: VisitFit[] = [];
  const head = await fitEachVisit(file, o, (v) => visits.push(v));
  return { ...head, visits };
}

/**
 * `--json` of a fit whose visits (JSON text, one per line) come from a spill file: the layout
 * of render.ts `jsonChunks` for the whole result, piece by piece.
 */
function* fitJsonChunks(head: DmFitHead, visits: Iterable<string>): Generator<string> {
  const pieces = [...jsonChunks(head)];
  const close = pieces.pop()!;
  yield* pieces;
  let block = ',\n  "visits": [';
  let n = 0;
  for (const v of visits) {
    block += (n++ ? ',\n    ' : '\n    ') + v;
    if (block.length > 1 << 16) {
      yield block;
      block = '';
    }
  }
  yield n ? block + '\n  ]' : block + ']';
  yield close;
}

const FIT_CSV_COLUMNS = [...FIT_COLUMNS, ...CHROMATIC_COLUMNS];

/**
 * The cells of a visit's `--format csv` row (shared/review/rows.ts `dmFitRows`, through
 * render.ts `csv`) for every column, chromatic ones included, as JSON text: numbers JSON cannot
 * hold (NaN, ±Infinity) as the text csv-stringify prints for them.
 */
function csvCellsJson(v: VisitFit): string {
  return JSON.stringify(
    FIT_CSV_COLUMNS.map((c) => {
      const x = v[c as keyof VisitFit];
      if (Array.isArray(x)) return x.join(';');
      if (x === null || x === undefined) return '';
      return typeof x === 'number' && !Number.isFinite(x) ? String(x) : x;
    }),
  );
}

/** `--format csv` of a fit from its spilled rows: the chromatic columns only when used. */
function* fitCsvChunks(chromatic: boolean, rows: Iterable<string>): Generator<string> {
  const width = chromatic ? FIT_CSV_COLUMNS.length : FIT_COLUMNS.length;
  yield csv(FIT_CSV_COLUMNS.slice(0, width), []);
  let batch: Cell[][] = [];
  for (const line of rows) {
    batch.push((JSON.parse(line) as Cell[]).slice(0, width));
    if (batch.length === 4096) {
      yield stringify(batch);
      batch = [];
    }
  }
  if (batch.length) yield stringify(batch);
}

function renderFit(r: DmFitResult, format: string): string | Iterable<string> {
  if (format === 'json') return jsonChunks(r);
  if (format === 'csv') {
    const { head, rows } = dmFitRows(r);
    return csv(head, rows);
  }
  const kind = r.visits[0]?.dm_kind === 'offset' ? 'ΔDM' : 'DM';
  const chromatic = r.visits.some((v) => v.tau_ref_us !== undefined);
  const rows = r.visits.map((v) => [
    v.source,
    v.mjd.toFixed(3),
    v.n_toas,
    `${fmt(v.freq_min_mhz, 4)}–${fmt(v.freq_max_mhz, 4)}`,
    v.status === 'fitted' ? v.dm!.toFixed(6) : 'unconstrained',
    v.dm_err === null ? null : v.dm_err.toExponential(2),
    v.dm_err_scaled === null ? null : v.dm_err_scaled.toExponential(2),
    v.reduced_chi2 === null ? null : v.reduced_chi2.toFixed(2),
    ...(chromatic
      ? [
          v.tau_ref_us === undefined
            ? null
            : `${fmt(v.tau_ref_us, 3)} ± ${fmt(v.tau_ref_err_us, 2)}`,
          v.alpha === undefined
            ? null
            : v.alpha_err
              ? `${v.alpha.toFixed(2)} ± ${v.alpha_err.toFixed(2)}`
              : `${v.alpha} fixed`,
          v.preferred?.replace('_', ' ') ?? null,
        ]
      : []),
    v.warnings.length ? `${v.warnings.length}` : '',
  ]);
  let text =
    `constant ${r.constant.name} (K = ${r.constant.value.toFixed(4)} s MHz² pc⁻¹ cm³) · ${r.summary.n_fitted}/${r.summary.n_visits} visits fitted\n` +
    table(
      [
        'source',
        'MJD',
        'TOAs',
        'band (MHz)',
        `${kind} (pc cm⁻³)`,
        'σ',
        'σ scaled',
        'χ²_red',
        ...(chromatic
          ? [
              `τ_ref (µs, ${r.visits.find((v) => v.ref_freq_mhz)?.ref_freq_mhz} MHz)`,
              'α',
              'preferred (BIC)',
            ]
          : []),
        'warn',
      ],
      rows,
      [1, 2, 4, 5, 6, 7, ...(chromatic ? [8, 9, 11] : [8])],
    );
  const warned = r.visits.filter((v) => v.warnings.length);
  if (warned.length) {
    text += '\nwarnings:\n';
    for (const v of warned.slice(0, 50))
      for (const w of v.warnings) text += `  ${v.source} MJD ${v.mjd.toFixed(3)}: ${w}\n`;
    if (warned.length > 50)
      text += `  … ${warned.length - 50} more visits with warnings (see --json)\n`;
  }
  return text;
}

function exitForFit(r: Pick<DmFitResult, 'summary'>, strict: boolean | undefined): void {
  if (r.summary.n_fitted === 0)
    throw checkFailed('no visit could be fitted (every visit is unconstrained)');
  if (strict && r.summary.n_unconstrained > 0) {
    throw checkFailed(`${r.summary.n_unconstrained} visit(s) unconstrained (--strict)`);
  }
}

export interface SeriesCliOptions extends FitCliOptions {
  smooth: 'none' | 'gp';
  solar?: number;
  ra?: number;
  dec?: number;
  positions?: string;
  refDm?: number;
}

function readPositions(o: SeriesCliOptions, sources: string[]): Map<string, Position> | undefined {
  const map = new Map<string, Position>();
  if (o.positions) {
    let list: unknown;
    try {
      list = JSON.parse(readFileSync(o.positions, 'utf8'));
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code) throw e;
      throw new InputError(`not valid JSON (${(e as Error).message})`, { file: o.positions });
    }
    const arr = Array.isArray(list) ? list : (list as { pulsars?: unknown[] })?.pulsars;
    if (!Array.isArray(arr))
      throw new InputError('expected an array of { source, ra_deg, dec_deg }', {
        file: o.positions,
      });
    arr.forEach((p: { source?: unknown; ra_deg?: unknown; dec_deg?: unknown }, i) => {
      for (const key of ['source', 'ra_deg', 'dec_deg'] as const) {
        const bad =
          key === 'source'
            ? typeof p?.[key] !== 'string'
            : typeof p?.[key] !== 'number' || !Number.isFinite(p[key]);
        if (bad)
          throw new InputError(`missing or invalid "${key}"`, {
            file: o.positions,
            row: i + 1,
            column: key,
          });
      }
      map.set(p.source as string, { raDeg: p.ra_deg as number, decDeg: p.dec_deg as number });
    });
  }
  if (o.ra !== undefined || o.dec !== undefined) {
    if (o.ra === undefined || o.dec === undefined) throw usageError('give both --ra and --dec');
    for (const s of sources) map.set(s, { raDeg: o.ra, decDeg: o.dec });
  }
  return map.size ? map : undefined;
}

/** What a DM series needs of a fit: its envelope, and of each visit the fields the series reads. */
type FitForSeries = DmFitHead & { visits: SeriesVisit[] };

/** The fields of a visit `buildDmSeries` reads (all a 10⁶-visit series keeps of each fit). */
function seriesVisit(v: VisitFit): SeriesVisit {
  return {
    source: v.source,
    mjd: v.mjd,
    mjd_first: v.mjd_first,
    mjd_last: v.mjd_last,
    status: v.status,
    dm: v.dm,
    dm_err_scaled: v.dm_err_scaled,
    dm_kind: v.dm_kind,
    n_toas: v.n_toas,
  };
}

async function loadFit(file: string, o: SeriesCliOptions): Promise<FitForSeries> {
  const name = o.inputName ?? file;
  if (name.toLowerCase().endsWith('.json')) {
    let text: string;
    try {
      text = readFileSync(file, 'utf8');
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== 'ERR_STRING_TOO_LONG') throw e;
      // JSON is read as one text, and a JavaScript string holds at most 2²⁹ − 24 characters
      throw new InputError(
        'too large to read as one JSON text: give dm series the arrival-time table instead',
        { file: name },
      );
    }
    if (text.includes('"sightline/dm-fit@1"')) {
      // the fit is already made: options that would change it must not be silently ignored
      const given = (
        [
          ['--gap', o.gap],
          ['--window', o.window],
          ['--window-start', o.windowStart],
          ['--period-s', o.periodS],
          ['--clip', o.clip],
          ['--evolution', o.evolution ? o.evolution : undefined],
          ['--scatter', o.scatter && o.scatter !== 'none' ? o.scatter : undefined],
        ] as Array<[string, unknown]>
      ).filter(([, v]) => v !== undefined);
      if (given.length) {
        throw usageError(
          `${name} is a finished DM fit: ${given.map(([k]) => k).join(', ')} would change the fit, so give the arrival-time table instead`,
        );
      }
      const parsed = dmFitResultSchema.safeParse(JSON.parse(text));
      if (!parsed.success) {
        const issue = parsed.error.issues[0];
        throw new InputError(`not a valid dm-fit result: ${issue.message}`, {
          file: name,
          column: issue.path.join('.'),
        });
      }
      if (o.constant && o.constant !== parsed.data.constant.name) {
        throw usageError(
          `${name} was fitted with the ${parsed.data.constant.name} constant, not ${o.constant}`,
        );
      }
      return parsed.data;
    }
  }
  const visits: SeriesVisit[] = [];
  const head = await fitEachVisit(file, o, (v) => visits.push(seriesVisit(v)));
  return { ...head, visits };
}

export async function runDmSeries(file: string, o: SeriesCliOptions): Promise<DmSeriesResult> {
  const fit = await loadFit(file, o);
  const sources = [...new Set(fit.visits.map((v) => v.source))];
  const positions = readPositions(o, sources);
  if (o.solar !== undefined) {
    const missing = sources.filter((s) => !positions?.has(s));
    if (missing.length)
      throw usageError(
        `--solar needs positions for ${missing.join(', ')} (--ra/--dec or --positions FILE)`,
      );
  }
  const body = await withProgress(o, 'building the DM series', async () =>
    buildDmSeries(fit.visits, {
      smooth: o.smooth,
      solarN0: o.solar,
      positions,
      referenceDm: o.refDm,
    }),
  );
  return dmSeriesResultSchema.parse({
    schema: 'sightline/dm-series@1',
    software: SOFTWARE,
    created_utc: new Date().toISOString(),
    constant: fit.constant,
    parameters: {
      ...(fit.parameters ?? {}),
      smooth: o.smooth,
      solar_n0_cm3: o.solar ?? null,
      reference_dm: o.refDm ?? null,
    },
    input: fit.input,
    cautions: [CAUTION],
    ...(o.solar !== undefined ? { solar: { n0_cm3: o.solar, model: SOLAR_MODEL } } : {}),
    ...body,
  });
}

/** `--format csv` of a series in pieces (render.ts `csv` of all rows, a few thousand at a time). */
function* seriesCsvChunks(r: DmSeriesResult): Generator<string> {
  const { head, rows } = seriesRows(r);
  yield csv(head, []);
  for (let i = 0; i < rows.length; i += 4096)
    yield stringify(
      rows
        .slice(i, i + 4096)
        .map((row) => row.map((c) => (c === null || c === undefined ? '' : c))),
    );
}

function renderSeries(r: DmSeriesResult, format: string): string | Iterable<string> {
  // JSON and CSV in pieces: 10⁶ points never become one string
  if (format === 'json') return jsonChunks(r);
  if (format === 'csv') return seriesCsvChunks(r);
  let text = `constant ${r.constant.name}${r.solar ? ` · solar wind n0 = ${r.solar.n0_cm3} cm⁻³ subtracted` : ''}\n`;
  text += table(
    ['source', 'kind', 'points', 'unconstr.', 'reference DM', 'GP amplitude', 'GP length (d)'],
    r.sources.map((s) => [
      s.source,
      s.dm_kind,
      s.n_points,
      s.n_unconstrained,
      s.reference_dm.toFixed(6),
      s.gp ? s.gp.amplitude_dm.toExponential(2) : null,
      s.gp ? s.gp.length_days.toFixed(1) : null,
    ]),
    [2, 3, 4, 5, 6],
  );
  for (const src of r.sources)
    for (const w of src.warnings ?? []) text += `warning: ${src.source}: ${w}\n`;
  text += table(
    ['source', 'MJD', 'DM (pc cm⁻³)', 'σ', 'TOAs', ...(r.solar ? ['DM_sun'] : [])],
    r.points.map((p) => [
      p.source,
      p.mjd.toFixed(3),
      p.dm.toFixed(6),
      p.dm_err.toExponential(2),
      p.n_toas,
      ...(r.solar ? [p.dm_solar?.toExponential(2)] : []),
    ]),
    [1, 2, 3, 4, 5],
  );
  return text;
}

/**
 * `dm fit`: as JSON or CSV, each visit is written to a temporary file as it is fitted and the
 * output streamed from there, so memory holds the arrival times but not the visits (10⁶ visits
 * of a 10⁷-row table would take more than the table). The terminal table needs them all.
 */
export async function runFitCommand(file: string, o: FitCliOptions): Promise<void> {
  const format = formatOf(o);
  if (format !== 'json' && format !== 'csv') {
    const r = await runDmFit(file, o);
    await writeOutput(o.out, renderFit(r, format));
    if (r.summary.n_warnings) note(o, `${r.summary.n_warnings} warning(s); ${CAUTION}`);
    exitForFit(r, o.strict);
    return;
  }
  const spill = new LineSpill();
  try {
    let chromatic = false;
    const head = await fitEachVisit(file, o, (v) => {
      if (v.tau_ref_us !== undefined) chromatic = true;
      spill.push(format === 'json' ? JSON.stringify(v) : csvCellsJson(v));
    });
    await writeOutput(
      o.out,
      format === 'json'
        ? fitJsonChunks(head, spill.lines())
        : fitCsvChunks(chromatic, spill.lines()),
    );
    if (head.summary.n_warnings) note(o, `${head.summary.n_warnings} warning(s); ${CAUTION}`);
    exitForFit(head, o.strict);
  } finally {
    spill.remove();
  }
}

export async function runSeriesCommand(file: string, o: SeriesCliOptions): Promise<void> {
  const r = await runDmSeries(file, o);
  await writeOutput(o.out, renderSeries(r, formatOf(o)));
  if (r.points.length === 0) throw checkFailed('the series has no fitted visits');
}
