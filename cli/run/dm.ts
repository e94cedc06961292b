import { readFileSync } from 'node:fs';
import { fitDmVisits, type DmFitOptions } from '../../shared/fit/dm-fit.js';
import { dmFitResultSchema, type DmFitResult } from '../../shared/schemas/dm-fit.js';
import { dmSeriesResultSchema, type DmSeriesResult } from '../../shared/schemas/dm-series.js';
import { buildDmSeries, type Position } from '../../shared/series/dm-series.js';
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
import { writeOutput } from '../io/output.js';
import { dmFitRows, seriesRows } from '../../shared/review/rows.js';
import { csv, fmt, json, jsonChunks, table } from '../render.js';

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

export async function runDmFit(file: string, o: FitCliOptions): Promise<DmFitResult> {
  const opts = fitOptions(o);
  const name = o.inputName ?? file;
  const { table: t, summary } = await withProgress(o, `reading ${name}`, () =>
    readToaTable(file, name),
  );
  const visits = await withProgress(o, `fitting ${t.length} arrival times`, async () => {
    try {
      return fitDmVisits(t, opts);
    } catch (e) {
      throw e instanceof InputError ? e.inFile(name) : e;
    }
  });
  const fitted = visits.filter((v) => v.status === 'fitted').length;
  // typed by the shared schema; the tests validate outputs with it (a zod pass here would copy
  // 10⁵ visits for nothing)
  const result: DmFitResult = {
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
      n_visits: visits.length,
      n_fitted: fitted,
      n_unconstrained: visits.length - fitted,
      n_warnings: visits.reduce((s, v) => s + v.warnings.length, 0),
    },
    visits,
  };
  return result;
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

function exitForFit(r: DmFitResult, strict: boolean | undefined): void {
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

async function loadFit(file: string, o: SeriesCliOptions): Promise<DmFitResult> {
  const name = o.inputName ?? file;
  if (name.toLowerCase().endsWith('.json')) {
    const text = readFileSync(file, 'utf8');
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
  return runDmFit(file, o);
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

function renderSeries(r: DmSeriesResult, format: string): string {
  if (format === 'json') return json(r);
  if (format === 'csv') {
    const { head, rows } = seriesRows(r);
    return csv(head, rows);
  }
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

export async function runFitCommand(file: string, o: FitCliOptions): Promise<void> {
  const r = await runDmFit(file, o);
  await writeOutput(o.out, renderFit(r, formatOf(o)));
  if (r.summary.n_warnings) note(o, `${r.summary.n_warnings} warning(s); ${CAUTION}`);
  exitForFit(r, o.strict);
}

export async function runSeriesCommand(file: string, o: SeriesCliOptions): Promise<void> {
  const r = await runDmSeries(file, o);
  await writeOutput(o.out, renderSeries(r, formatOf(o)));
  if (r.points.length === 0) throw checkFailed('the series has no fitted visits');
}
