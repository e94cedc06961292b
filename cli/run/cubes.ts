import { basename } from 'node:path';
import { analyseCube, prepareTemplate, type CubeContext } from '../../shared/cubes/context.js';
import type { Cube } from '../../shared/cubes/cube.js';
import { jointFit, type JointFit } from '../../shared/cubes/joint.js';
import {
  dedispersedProfile,
  DmShifter,
  matchedWeights,
  refineDm,
  shiftPerDm,
  weightedCentreMhz,
  MAX_TRIALS,
  type DmRange,
} from '../../shared/cubes/refine.js';
import {
  buildTemplate,
  CubeSetError,
  scrunchCube,
  type BuiltTemplate,
  type VisitProfile,
  type SmoothMethod,
} from '../../shared/cubes/template.js';
import { channelToas, DEFAULT_MIN_SNR, type CubeToas } from '../../shared/cubes/toas.js';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { InputError } from '../../shared/formats/errors.js';
import { ToaTable } from '../../shared/formats/toa-table.js';
import { checkHeader } from '../../shared/formats/toas.js';
import type { DispersionConstant } from '../../shared/physics/constants.js';
import type { ProfileSet } from '../../shared/profiles/types.js';
import type { DmRefineResult } from '../../shared/schemas/dm-refine.js';
import type { InputFile } from '../../shared/schemas/common.js';
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
import { readCube, readTemplate } from '../io/read-cube.js';
import { writeFileAtomic, writeOutput } from '../io/output.js';
import { csv, fmt, jsonChunks, table, type Cell } from '../render.js';

// ---------------------------------------------------------------------------------------------
// shared steps

function minSnrOf(v: number | undefined): number {
  return v ?? DEFAULT_MIN_SNR;
}

/** The template file fitted to this cube; its problems are reported against its own file. */
function templateFor(t: { set: ProfileSet; path: string }, cube: Cube) {
  try {
    return prepareTemplate(t.set, cube);
  } catch (e) {
    throw e instanceof InputError ? e.inFile(t.path) : e;
  }
}

/** The label a cube's arrival times carry: the file's receiver, else the file's name. */
function cubeLabel(cube: Cube, path: string): string {
  return cube.receiver ?? basename(path).replace(/\.(npy|json)$/i, '');
}

// ---------------------------------------------------------------------------------------------
// toas extract

export interface ExtractCliOptions extends CommonOptions {
  template: string;
  meta?: string;
  joint?: boolean;
  minSnr?: number;
}

interface ExtractedCube {
  path: string;
  label: string;
  cube: Cube;
  toas?: CubeToas;
  joint?: JointFit;
}

const CHANNEL_COLUMNS = [
  'source',
  'mjd',
  'freq_mhz',
  'err_us',
  'snr',
  'receiver',
  'pulse',
  'channel',
] as const;
const JOINT_COLUMNS = [
  'source',
  'mjd',
  'freq_mhz',
  'err_us',
  'dm',
  'dm_err',
  'snr',
  'reduced_chi2',
  'n_channels',
  'receiver',
] as const;

/** Up to 9 significant digits for derived numbers in tables written for programs. */
const sig = (v: number, digits = 9) => Number(v.toPrecision(digits));

export async function extractToas(
  files: string[],
  o: ExtractCliOptions,
): Promise<{ cubes: ExtractedCube[]; input: InputFile[] }> {
  if (files.length === 0) throw usageError('give at least one cube');
  if (o.meta && files.length > 1)
    throw usageError('--meta names the sidecar of one .npy cube: give one cube with it');
  const k = constantOf(o);
  const minSnr = minSnrOf(o.minSnr);
  const t = await readTemplate(o.template);
  const input: InputFile[] = [...t.input];
  const cubes: ExtractedCube[] = [];
  for (const path of files) {
    const { cube, input: cubeInput } = await readCube(path, o.meta);
    input.push(...cubeInput);
    const tmpl = templateFor({ set: t.set, path: o.template }, cube);
    const entry: ExtractedCube = { path, label: cubeLabel(cube, path), cube };
    await withProgress(o, `matching ${cube.nchan} channels of ${path}`, async () => {
      const ctx = analyseCube(cube, tmpl);
      if (o.joint) entry.joint = jointFit(ctx, k, minSnr);
      else entry.toas = channelToas(ctx, k, minSnr);
    });
    cubes.push(entry);
  }
  return { cubes, input };
}

function extractRows(cubes: ExtractedCube[], joint: boolean): { head: string[]; rows: Cell[][] } {
  if (joint) {
    const rows: Cell[][] = [];
    for (const c of cubes) {
      const j = c.joint!;
      if (j.status !== 'fitted') continue;
      rows.push([
        j.source,
        j.toaMjd,
        sig(j.freqMhz),
        sig(j.errUs!, 6),
        sig(j.dm!, 12),
        sig(j.dmErr!, 6),
        sig(j.snr, 6),
        j.reducedChi2 === null ? null : sig(j.reducedChi2, 6),
        j.nChannels,
        c.label,
      ]);
    }
    return { head: [...JOINT_COLUMNS], rows };
  }
  const rows: Cell[][] = [];
  for (const c of cubes) {
    for (const toa of c.toas!.toas) {
      rows.push([
        c.cube.source,
        toa.mjd,
        toa.freqMhz,
        sig(toa.errUs, 6),
        sig(toa.snr, 6),
        c.label,
        0,
        toa.channel + 1,
      ]);
    }
  }
  return { head: [...CHANNEL_COLUMNS], rows };
}

export async function runToasExtract(files: string[], o: ExtractCliOptions): Promise<void> {
  const { cubes } = await extractToas(files, o);
  const joint = Boolean(o.joint);
  const { head, rows } = extractRows(cubes, joint);
  const format = formatOf(o, 'csv');
  // notes per cube: what was used and what was skipped
  for (const c of cubes) {
    if (joint) {
      const j = c.joint!;
      note(
        o,
        j.status === 'fitted'
          ? `${c.path}: DM ${j.dm!.toFixed(6)} ± ${j.dmErr!.toExponential(2)}, arrival time at ${j.freqMhz.toFixed(1)} MHz ± ${fmt(j.errUs, 3)} µs from ${j.nChannels} channels`
          : `${c.path}: not fitted`,
      );
      for (const w of j.warnings) note(o, `  warning: ${w}`);
    } else {
      const t = c.toas!;
      note(
        o,
        `${c.path}: ${t.toas.length} of ${t.nchan} channels give arrival times (${t.nLowSnr} below S/N ${minSnrOf(o.minSnr)}, ${t.nFlagged} flagged${t.nFailed ? `, ${t.nFailed} without a usable match` : ''})`,
      );
      for (const w of t.warnings) note(o, `  warning: ${w}`);
    }
  }
  if (rows.length === 0) {
    throw checkFailed(
      joint
        ? 'no cube could be fitted jointly (see the warnings)'
        : `no channel reached S/N ${minSnrOf(o.minSnr)}: no arrival times`,
    );
  }
  let text: string | Iterable<string>;
  if (format === 'json') {
    // the arrival-time table's JSON layout: an array of row objects
    text = jsonChunks(rows.map((r) => Object.fromEntries(head.map((h, i) => [h, r[i]]))));
  } else if (format === 'table') text = table(head, rows, [2, 3, 4]);
  else text = csv(head, rows);
  await writeOutput(o.out, text);
  if (joint) {
    const skipped = cubes.filter((c) => c.joint!.status !== 'fitted').length;
    if (skipped) throw checkFailed(`${skipped} cube(s) could not be fitted jointly`);
  }
}

// ---------------------------------------------------------------------------------------------
// template build

export interface TemplateCliOptions extends CommonOptions {
  smooth: SmoothMethod;
}

export function templateFileBody(b: BuiltTemplate, input: InputFile[]): Record<string, unknown> {
  return {
    schema: 'sightline/template@1',
    software: SOFTWARE,
    created_utc: new Date().toISOString(),
    input,
    source: b.source,
    mjd: b.mjd,
    period_s: b.periodS,
    dm: b.dm,
    ...(b.refFreqMhz !== null ? { ref_freq_mhz: b.refFreqMhz } : {}),
    fiducial_phase: b.fiducialPhase,
    profiles: [{ freq_mhz: sig(b.freqMhz, 8), bins: Array.from(b.bins, (v) => sig(v, 8)) }],
    build: {
      smooth: b.smooth,
      harmonics_kept: b.harmonicsKept,
      noise: sig(b.noise, 6),
      n_visits: b.visits.length,
      n_used: b.visits.filter((v) => v.used).length,
      visits: b.visits.map((v) => ({ ...v, snr: sig(v.snr, 6), weight: sig(v.weight, 6) })),
      warnings: b.warnings,
    },
  };
}

export async function runTemplateBuild(files: string[], o: TemplateCliOptions): Promise<void> {
  if (files.length === 0) throw usageError('give at least one cube');
  // one cube in memory at a time: each is reduced to its band-averaged profile
  const cubes: VisitProfile[] = [];
  const input: InputFile[] = [];
  for (const path of files) {
    const r = await readCube(path);
    cubes.push(scrunchCube(r.cube));
    input.push(...r.input);
  }
  const built = await withProgress(o, `aligning ${cubes.length} visits`, async () => {
    try {
      return buildTemplate(cubes, { smooth: o.smooth });
    } catch (e) {
      if (e instanceof CubeSetError) throw e.inFile(files[e.cubeIndex]);
      throw e;
    }
  });
  const body = templateFileBody(built, input);
  const used = built.visits.filter((v) => v.used).length;
  note(
    o,
    `template of ${built.source} from ${used} of ${built.visits.length} visit(s), ${built.nbin} bins at ${built.freqMhz.toFixed(1)} MHz, smoothing ${built.smooth}${built.harmonicsKept !== null ? ` (${built.harmonicsKept} harmonics kept)` : ''}; its arrival times mark the peak (fiducial phase ${built.fiducialPhase})`,
  );
  for (const w of built.warnings) note(o, `warning: ${w}`);
  await writeOutput(o.out, jsonChunks(body));
}

// ---------------------------------------------------------------------------------------------
// dm refine

export interface RefineCliOptions extends CommonOptions {
  meta?: string;
  range: DmRange;
  template?: string;
  minSnr?: number;
  profileOut?: string;
  inputName?: string;
}

/** The DM fitted to a cube's channel arrival times (one visit, absolute DM). */
function dmFromToas(toas: CubeToas, cube: Cube, k: DispersionConstant) {
  const table = new ToaTable(
    checkHeader(['source', 'mjd', 'freq_mhz', 'err_us', 'pulse']),
    toas.toas.length,
  );
  toas.toas.forEach((t, i) =>
    table.push({
      row: i + 1,
      source: cube.source,
      mjdText: t.mjd,
      epoch: t.epoch,
      freqMhz: t.freqMhz,
      errUs: t.errUs,
      pulse: 0,
    }),
  );
  if (table.length < 2) return null;
  const [visit] = fitDmVisits(table, {
    constant: k,
    grouping: { kind: 'gap', gapDays: 1e9 },
    evolution: 0,
  });
  return visit;
}

export async function refineCube(file: string, o: RefineCliOptions): Promise<DmRefineResult> {
  const k = constantOf(o);
  const minSnr = minSnrOf(o.minSnr);
  const name = o.inputName ?? file;
  const { cube, input } = await readCube(file, o.meta, name);
  const warnings: string[] = [];
  let set: ProfileSet;
  let builtFromCube = false;
  if (o.template) {
    const t = await readTemplate(o.template);
    input.push(...t.input);
    set = t.set;
  } else {
    builtFromCube = true;
    const b = buildTemplate([scrunchCube(cube)], { smooth: 'fourier' });
    set = {
      source: b.source,
      mjd: b.mjd,
      periodS: b.periodS,
      fiducialPhase: b.fiducialPhase,
      bands: [{ freqMhz: b.freqMhz, bins: b.bins }],
    };
    warnings.push(
      'no --template: the template was built from this cube itself, so its noise favours the DM the cube was dedispersed with; give a template from other visits for an unbiased DM',
    );
  }
  const tmpl = templateFor({ set, path: o.template ?? name }, cube);
  const nTrials = Math.floor((o.range.hi - o.range.lo) / o.range.step + 1e-9) + 1;
  if (nTrials > MAX_TRIALS)
    throw usageError(
      `--range gives ${nTrials} trial DMs; at most ${MAX_TRIALS} (use a larger STEP)`,
    );
  const r = await withProgress(o, `S/N over trial DMs for ${name}`, async () => {
    const ctx: CubeContext = analyseCube(cube, tmpl);
    const weights = matchedWeights(ctx);
    const centre = weightedCentreMhz(ctx);
    const shifter = new DmShifter(ctx, weights, shiftPerDm(cube.freqs, cube.periodS, centre, k));
    const outcome = refineDm(shifter, cube.dmApplied, o.range);
    const toas = channelToas(ctx, k, minSnr);
    const fromToas = dmFromToas(toas, cube, k);
    const profile = dedispersedProfile(
      ctx,
      weights,
      shiftPerDm(cube.freqs, cube.periodS, cube.refFreqMhz, k),
      outcome.best.dm - cube.dmApplied,
    );
    return { ctx, weights, outcome, toas, fromToas, profile, centre, used: shifter.used.length };
  });
  warnings.push(...tmpl.warnings, ...r.outcome.warnings);
  const ft = r.fromToas;
  const fitted = ft && ft.status === 'fitted';
  if (ft) for (const w of ft.warnings) warnings.push(`from arrival times: ${w}`);
  const best = r.outcome.best;
  const diff =
    fitted && best.dm_err !== null
      ? Math.abs(best.dm - ft.dm!) / Math.hypot(best.dm_err, ft.dm_err_scaled!)
      : null;
  if (diff !== null && diff > 3)
    warnings.push(
      `the two DMs differ by ${diff.toFixed(1)}σ: profile evolution, scattering or a poor template affects one of them`,
    );
  let profile: DmRefineResult['profile'] = null;
  if (o.profileOut) {
    let sw = 0;
    let sf = 0;
    r.weights.forEach((w, c) => {
      sw += w;
      sf += w * cube.freqs[c];
    });
    profile = { path: o.profileOut, freq_mhz: sig(sf / sw), noise: sig(r.profile.noise, 6) };
    const body = {
      source: cube.source,
      mjd: cube.mjd,
      period_s: cube.periodS,
      dm: sig(best.dm, 12),
      ...(cube.refFreqMhz !== null ? { ref_freq_mhz: cube.refFreqMhz } : {}),
      profiles: [
        {
          freq_mhz: profile.freq_mhz,
          bins: Array.from(r.profile.bins, (v) => sig(v, 8)),
          noise: profile.noise,
        },
      ],
    };
    await writeFileAtomic(o.profileOut, JSON.stringify(body) + '\n');
  }
  return {
    schema: 'sightline/dm-refine@1',
    software: SOFTWARE,
    created_utc: new Date().toISOString(),
    constant: k,
    parameters: {
      range: { lo: o.range.lo, hi: o.range.hi, step: o.range.step },
      min_snr: minSnr,
      shift_ref_freq_mhz: sig(r.centre),
      weights: 'matched filter: template amplitude / harmonic noise variance',
    },
    input,
    cautions: [CAUTION],
    source: cube.source,
    mjd: cube.mjd,
    period_s: cube.periodS,
    nbin: cube.nbin,
    dm_applied: cube.dmApplied,
    n_channels: cube.nchan,
    n_flagged: cube.flagged.reduce((s, f) => s + f, 0),
    n_used: r.used,
    template: { path: o.template ?? null, built_from_cube: builtFromCube },
    best,
    curve: r.outcome.curve,
    at_edge: r.outcome.atEdge,
    from_toas: {
      dm: fitted ? ft.dm : null,
      dm_err: fitted ? ft.dm_err : null,
      dm_err_scaled: fitted ? ft.dm_err_scaled : null,
      reduced_chi2: fitted ? ft.reduced_chi2 : null,
      n_toas: r.toas.toas.length,
      n_low_snr: r.toas.nLowSnr,
      min_snr: minSnr,
    },
    difference_sigma: diff,
    profile,
    warnings,
  };
}

function renderRefine(r: DmRefineResult, format: string): string | Iterable<string> {
  if (format === 'json') return jsonChunks(r);
  if (format === 'csv')
    return csv(
      ['dm', 'snr'],
      r.curve.map((p) => [p.dm, sig(p.snr, 8)]),
    );
  const ft = r.from_toas;
  let text = `${r.source} · MJD ${r.mjd} · ${r.n_used} of ${r.n_channels} channels (${r.n_flagged} flagged) · dedispersed at DM ${r.dm_applied} · constant ${r.constant.name}\n`;
  text += table(
    ['method', 'DM (pc cm⁻³)', 'σ', 'S/N or χ²_red', 'from'],
    [
      [
        'S/N over trial DMs',
        r.best.dm.toFixed(6),
        r.best.dm_err === null ? null : r.best.dm_err.toExponential(2),
        `S/N ${r.best.snr.toFixed(1)}`,
        `${r.curve.length} trials ${fmt(r.curve[0].dm, 10)}–${fmt(r.curve[r.curve.length - 1].dm, 10)}`,
      ],
      [
        'channel arrival times',
        ft.dm === null ? 'unconstrained' : ft.dm.toFixed(6),
        ft.dm_err_scaled === null ? null : ft.dm_err_scaled.toExponential(2),
        ft.reduced_chi2 === null ? null : `χ²_red ${ft.reduced_chi2.toFixed(2)}`,
        `${ft.n_toas} channels with S/N ≥ ${ft.min_snr}`,
      ],
    ],
    [1, 2],
  );
  if (r.difference_sigma !== null) text += `difference: ${r.difference_sigma.toFixed(2)}σ\n`;
  if (r.warnings.length) text += `\nwarnings:\n${r.warnings.map((w) => `  ${w}`).join('\n')}\n`;
  return text;
}

export async function runDmRefine(file: string, o: RefineCliOptions): Promise<void> {
  const r = await refineCube(file, o);
  await writeOutput(o.out, renderRefine(r, formatOf(o)));
  if (r.warnings.length) note(o, `${r.warnings.length} warning(s); ${CAUTION}`);
  if (r.at_edge) throw checkFailed('the S/N peaks at the edge of --range: widen it');
  if (r.best.dm_err === null) throw checkFailed('the S/N curve gives no DM uncertainty');
}
