import { z } from 'zod';
import { InputError, type InputLocation } from '../formats/errors.js';
import { jsonSyntaxError } from '../formats/json.js';
import { quoteMjdNumbers } from '../formats/toas.js';
import { EpochSyntaxError, parseMjd } from '../time/mjd.js';
import { formatShape, type NpyArray } from './npy.js';
import type { BandProfile, ProfileSet } from './types.js';

/**
 * Profile inputs (interfaces.md "Profiles"): a JSON file
 * `{ source, mjd, period_s, dm?, profiles: [{ freq_mhz, bins, noise? }] }`, or a `.npy` array
 * `[nchan, nbin]` with a sidecar `{ source, mjd, period_s, freqs_mhz, dm?, noise? }`.
 * Both become a ProfileSet and pass the same checks (`checkProfileSet`).
 */

/** The fewest phase bins a profile may have. */
export const MIN_BINS = 16;

/** Bad input that lies in a `.npy` array's sidecar file rather than in the array. */
export class SidecarError extends InputError {}

/**
 * A problem `checkProfileSet` found, with what it concerns (field, band, bin) so each layout can
 * point at its own place in the file. The location given is the JSON layout's.
 */
export class ProfileCheckError extends InputError {
  constructor(
    reason: string,
    readonly field:
      'period_s' | 'dm' | 'ref_freq_mhz' | 'fiducial_phase' | 'bands' | 'freq' | 'bins' | 'noise',
    readonly band?: number,
    readonly bin?: number,
  ) {
    super(reason, jsonLocation(field, band, bin));
  }
}

function jsonLocation(field: ProfileCheckError['field'], band?: number, bin?: number) {
  if (band === undefined) return { column: field === 'bands' ? 'profiles' : field };
  const at = `profiles[${band}]`;
  const column =
    field === 'freq'
      ? `${at}.freq_mhz`
      : field === 'noise'
        ? `${at}.noise`
        : bin === undefined
          ? `${at}.bins`
          : `${at}.bins[${bin}]`;
  return { row: band + 1, column };
}

// ---------------------------------------------------------------------------------------------
// JSON text

const NON_FINITE = ['NaN', 'Infinity', '-Infinity'] as const;

/**
 * Parse JSON text for the profile layouts: a leading BOM is dropped, bare `"mjd": 60000.1…`
 * numbers are quoted so their digits survive, and the bare NaN / Infinity / -Infinity that
 * Python's json module writes become strings, so the checks can name the band and bin that
 * hold them instead of failing on a syntax error.
 */
export function parseJsonText(text: string): unknown {
  const own = text.replace(/^\uFEFF/, '');
  const body = quoteMjdNumbers(own).replace(/"(?:[^"\\]|\\.)*"|-?\b(?:NaN|Infinity)\b/g, (m) =>
    m[0] === '"' ? m : `"${m}"`,
  );
  try {
    return JSON.parse(body);
  } catch {
    // the line and character in the file's own text (the parsed text had numbers quoted)
    throw jsonSyntaxError(own, {}, { nonFinite: true });
  }
}

/** How strict the checks are: cubes may hold flagged channels (all NaN, or constant). */
export interface ProfileCheckOptions {
  /**
   * Accept channels whose bins are all non-finite or all equal (the usual marks of a channel
   * flagged for interference): they are listed in `flagged` and their bins set to 0, instead of
   * refusing the file. A channel with only some non-finite bins is still refused.
   */
  allowFlagged?: boolean;
}

/** A JSON profile file's text → checked ProfileSet. */
export function parseProfileJsonText(text: string, opts: ProfileCheckOptions = {}): ProfileSet {
  return parseProfileJson(parseJsonText(text), opts);
}

// ---------------------------------------------------------------------------------------------
// Schemas: types only; values are checked by checkProfileSet so both layouts share messages.

const number = z.union([z.number(), z.enum(NON_FINITE)], {
  error: 'expected a number',
});
const text = z.string({ error: 'expected a string' });
const mjd = z.union([z.string(), z.number()], {
  error: 'expected decimal MJD text or a number',
});

const jsonSchema = z.object(
  {
    source: text,
    mjd,
    period_s: number,
    dm: number.optional(),
    ref_freq_mhz: number.optional(),
    fiducial_phase: number.optional(),
    receiver: text.optional(),
    profiles: z.array(
      z.object(
        {
          freq_mhz: number,
          // bins are checked by hand: profiles can be long and zod per element is slow
          bins: z.array(z.unknown(), { error: 'expected an array of numbers' }),
          noise: number.optional(),
        },
        { error: 'expected an object { freq_mhz, bins, noise? }' },
      ),
      { error: 'expected an array of bands [{ freq_mhz, bins, noise? }]' },
    ),
  },
  { error: 'a profile file must hold one JSON object { source, mjd, period_s, profiles }' },
);

const sidecarSchema = z.object(
  {
    source: text,
    mjd,
    period_s: number,
    freqs_mhz: z.array(number, { error: 'expected an array of frequencies in MHz' }),
    dm: number.optional(),
    ref_freq_mhz: number.optional(),
    fiducial_phase: number.optional(),
    receiver: text.optional(),
    noise: z
      .union([number, z.array(number)], {
        error: 'expected a number or one number per channel',
      })
      .optional(),
  },
  {
    error: 'a sidecar must hold one JSON object { source, mjd, period_s, freqs_mhz }',
  },
);

const JSON_KEYS = 'source, mjd, period_s, profiles';
const SIDECAR_KEYS = 'source, mjd, period_s, freqs_mhz';

function toNumber(v: number | (typeof NON_FINITE)[number]): number {
  if (typeof v === 'number') return v;
  return v === 'NaN' ? NaN : v === 'Infinity' ? Infinity : -Infinity;
}

function formatPath(path: PropertyKey[]): string {
  let out = '';
  for (const p of path) {
    if (typeof p === 'number') out += `[${p}]`;
    else out += out ? `.${String(p)}` : String(p);
  }
  return out;
}

function valueAt(value: unknown, path: PropertyKey[]): unknown {
  let v = value;
  for (const p of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<PropertyKey, unknown>)[p];
  }
  return v;
}

function describeJson(v: unknown): string {
  if (v === null) return 'null';
  if (Array.isArray(v)) return 'an array';
  if (typeof v === 'object') return 'an object';
  if (typeof v === 'string') return JSON.stringify(v.length > 40 ? `${v.slice(0, 40)}…` : v);
  return String(v);
}

/** The first zod issue as an InputError naming the JSON path (and the band as `row`). */
function schemaError(
  error: z.ZodError,
  value: unknown,
  required: string,
  make: (reason: string, loc: InputLocation) => InputError,
): InputError {
  const issue = error.issues[0];
  const path = issue.path;
  const found = valueAt(value, path);
  const column = path.length ? formatPath(path) : undefined;
  const row = path[0] === 'profiles' && typeof path[1] === 'number' ? path[1] + 1 : undefined;
  const key = path[path.length - 1];
  const reason =
    found === undefined && typeof key === 'string'
      ? path.length === 1
        ? `missing "${key}" (required: ${required})`
        : `missing "${key}"`
      : `${issue.message}, found ${describeJson(found)}`;
  const loc: InputLocation = {};
  if (row !== undefined) loc.row = row;
  if (column !== undefined) loc.column = column;
  return make(reason, loc);
}

function mjdText(v: string | number, make: (reason: string, loc: InputLocation) => InputError) {
  const t = String(v).trim();
  try {
    parseMjd(t);
  } catch (e) {
    if (e instanceof EpochSyntaxError) throw make(e.message, { column: 'mjd' });
    throw e;
  }
  return t;
}

const plainError = (reason: string, loc: InputLocation) => new InputError(reason, loc);
const sidecarError = (reason: string, loc: InputLocation) => new SidecarError(reason, loc);

// ---------------------------------------------------------------------------------------------
// The JSON layout

/** A parsed JSON profile file → checked ProfileSet. Errors name the JSON path in `column`. */
export function parseProfileJson(value: unknown, opts: ProfileCheckOptions = {}): ProfileSet {
  const parsed = jsonSchema.safeParse(value);
  if (!parsed.success) throw schemaError(parsed.error, value, JSON_KEYS, plainError);
  const v = parsed.data;
  const bands: BandProfile[] = v.profiles.map((p, band) => {
    const bins = new Float64Array(p.bins.length);
    p.bins.forEach((b, i) => {
      if (typeof b === 'number') bins[i] = b;
      else if (b === 'NaN' || b === 'Infinity' || b === '-Infinity') bins[i] = toNumber(b);
      else {
        throw new InputError(`expected a number, found ${describeJson(b)}`, {
          row: band + 1,
          column: `profiles[${band}].bins[${i}]`,
        });
      }
    });
    const out: BandProfile = { freqMhz: toNumber(p.freq_mhz), bins };
    if (p.noise !== undefined) out.noise = toNumber(p.noise);
    return out;
  });
  const set: ProfileSet = {
    source: v.source.trim(),
    mjd: mjdText(v.mjd, plainError),
    periodS: toNumber(v.period_s),
    bands,
  };
  if (v.dm !== undefined) set.dm = toNumber(v.dm);
  if (v.ref_freq_mhz !== undefined) set.refFreqMhz = toNumber(v.ref_freq_mhz);
  if (v.fiducial_phase !== undefined) set.fiducialPhase = toNumber(v.fiducial_phase);
  if (v.receiver !== undefined && v.receiver.trim()) set.receiver = v.receiver.trim();
  if (!set.source) throw new InputError('the source name is empty', { column: 'source' });
  checkProfileSet(set, opts);
  return set;
}

// ---------------------------------------------------------------------------------------------
// The .npy layout

/**
 * A `.npy` array `[nchan, nbin]` (or 1-D: one band) and its parsed sidecar → checked
 * ProfileSet. Problems in the sidecar (and sidecar/array mismatches) throw SidecarError, so
 * the caller can name the sidecar file; problems in the array throw InputError with the array
 * index (`data[2, 17]`) in `column`.
 */
export function profilesFromNpy(
  arr: NpyArray,
  sidecar: unknown,
  opts: ProfileCheckOptions = {},
): ProfileSet {
  const parsed = sidecarSchema.safeParse(sidecar);
  if (!parsed.success) throw schemaError(parsed.error, sidecar, SIDECAR_KEYS, sidecarError);
  const meta = parsed.data;

  const shape = arr.shape;
  if (shape.length !== 1 && shape.length !== 2) {
    throw new InputError(
      `a profile array must be 2-D [nchan, nbin] (or 1-D for one band); this one has shape ${formatShape(shape)}`,
      { column: 'shape' },
    );
  }
  const [nchan, nbin] = shape.length === 2 ? shape : [1, shape[0]];
  if (meta.freqs_mhz.length !== nchan) {
    throw new SidecarError(
      `the sidecar lists ${meta.freqs_mhz.length} frequenc${meta.freqs_mhz.length === 1 ? 'y' : 'ies'} (freqs_mhz) but the array has ${nchan} channel${nchan === 1 ? '' : 's'} (shape ${formatShape(shape)})`,
      { column: 'freqs_mhz' },
    );
  }
  const noise = meta.noise;
  if (Array.isArray(noise) && noise.length !== nchan) {
    throw new SidecarError(
      `the sidecar lists ${noise.length} noise value${noise.length === 1 ? '' : 's'} but the array has ${nchan} channel${nchan === 1 ? '' : 's'} (shape ${formatShape(shape)}); give one number or one per channel`,
      { column: 'noise' },
    );
  }

  const bands: BandProfile[] = meta.freqs_mhz.map((f, c) => {
    const band: BandProfile = {
      freqMhz: toNumber(f),
      bins: arr.data.slice(c * nbin, (c + 1) * nbin),
    };
    if (noise !== undefined) band.noise = toNumber(Array.isArray(noise) ? noise[c] : noise);
    return band;
  });
  const set: ProfileSet = {
    source: meta.source.trim(),
    mjd: mjdText(meta.mjd, sidecarError),
    periodS: toNumber(meta.period_s),
    bands,
  };
  if (meta.dm !== undefined) set.dm = toNumber(meta.dm);
  if (meta.ref_freq_mhz !== undefined) set.refFreqMhz = toNumber(meta.ref_freq_mhz);
  if (meta.fiducial_phase !== undefined) set.fiducialPhase = toNumber(meta.fiducial_phase);
  if (meta.receiver !== undefined && meta.receiver.trim()) set.receiver = meta.receiver.trim();
  if (!set.source) throw new SidecarError('the source name is empty', { column: 'source' });

  try {
    checkProfileSet(set, opts);
  } catch (e) {
    if (!(e instanceof ProfileCheckError)) throw e;
    const { field, band, bin } = e;
    const row = band === undefined ? {} : { row: band + 1 };
    if (field === 'bands') throw new InputError(e.reason, { column: 'shape' });
    if (field === 'bins') {
      const index = (shape.length === 2 ? [band, bin] : [bin]).filter((i) => i !== undefined);
      throw new InputError(e.reason, {
        ...row,
        column: index.length ? `data[${index.join(', ')}]` : 'data',
      });
    }
    if (field === 'noise' && !Array.isArray(noise)) {
      throw new SidecarError(e.reason, { column: 'noise' });
    }
    const column =
      field === 'freq' ? `freqs_mhz[${band}]` : field === 'noise' ? `noise[${band}]` : field;
    throw new SidecarError(e.reason, { ...row, column });
  }
  return set;
}

// ---------------------------------------------------------------------------------------------
// Checks shared by both layouts

function mhz(f: number): string {
  return `${f} MHz`;
}

/**
 * Value checks every ProfileSet must pass before any fit: a positive finite period, a DM ≥ 0
 * when given, at least one band, distinct positive frequencies, the same number (≥ MIN_BINS) of
 * finite bins in every band, a signal (not every bin equal) and positive noise when given.
 * With `allowFlagged`, channels that are entirely non-finite or constant are flagged instead
 * (listed in `set.flagged`, bins set to 0); at least one channel must remain.
 * Throws ProfileCheckError.
 */
export function checkProfileSet(set: ProfileSet, opts: ProfileCheckOptions = {}): void {
  if (!(Number.isFinite(set.periodS) && set.periodS > 0)) {
    throw new ProfileCheckError(
      `the period must be a positive number of seconds, found ${set.periodS}`,
      'period_s',
    );
  }
  if (set.dm !== undefined && !(Number.isFinite(set.dm) && set.dm >= 0)) {
    throw new ProfileCheckError(`the DM must be a finite number ≥ 0, found ${set.dm}`, 'dm');
  }
  if (set.refFreqMhz !== undefined && !(Number.isFinite(set.refFreqMhz) && set.refFreqMhz > 0)) {
    throw new ProfileCheckError(
      `the reference frequency must be a positive number of MHz, found ${set.refFreqMhz}`,
      'ref_freq_mhz',
    );
  }
  if (
    set.fiducialPhase !== undefined &&
    !(Number.isFinite(set.fiducialPhase) && set.fiducialPhase >= 0 && set.fiducialPhase < 1)
  ) {
    throw new ProfileCheckError(
      `the fiducial phase must be a number in [0, 1) turns, found ${set.fiducialPhase}`,
      'fiducial_phase',
    );
  }
  if (set.bands.length === 0) throw new ProfileCheckError('there are no bands', 'bands');

  const bandOf = new Map<number, number>();
  set.bands.forEach((b, i) => {
    if (!(Number.isFinite(b.freqMhz) && b.freqMhz > 0)) {
      throw new ProfileCheckError(
        `the frequency must be a positive number of MHz, found ${b.freqMhz}`,
        'freq',
        i,
      );
    }
    const first = bandOf.get(b.freqMhz);
    if (first !== undefined) {
      throw new ProfileCheckError(
        `frequency ${mhz(b.freqMhz)} appears twice (bands ${first + 1} and ${i + 1}); each band needs its own frequency`,
        'freq',
        i,
      );
    }
    bandOf.set(b.freqMhz, i);
  });

  const nbin = set.bands[0].bins.length;
  set.bands.forEach((b, i) => {
    const name = `the ${mhz(b.freqMhz)} band`;
    if (b.bins.length < MIN_BINS) {
      throw new ProfileCheckError(
        `${name} has ${b.bins.length} bin${b.bins.length === 1 ? '' : 's'}; a profile needs at least ${MIN_BINS}`,
        'bins',
        i,
      );
    }
    if (b.bins.length !== nbin) {
      throw new ProfileCheckError(
        `${name} has ${b.bins.length} bins but the first band has ${nbin}; every band needs the same number of bins`,
        'bins',
        i,
      );
    }
    if (b.noise !== undefined && !(Number.isFinite(b.noise) && b.noise > 0)) {
      throw new ProfileCheckError(
        `the noise of ${name} must be a positive number, found ${b.noise}`,
        'noise',
        i,
      );
    }
    const bins = b.bins;
    let finite = 0;
    for (let j = 0; j < bins.length; j++) if (Number.isFinite(bins[j])) finite++;
    const v0 = bins[0];
    if (opts.allowFlagged && (finite === 0 || bins.every((v) => v === v0))) {
      (set.flagged ??= []).push(i);
      bins.fill(0);
      return;
    }
    for (let j = 0; j < bins.length; j++) {
      if (!Number.isFinite(bins[j])) {
        const hint = opts.allowFlagged
          ? ` (a flagged channel must be entirely NaN or constant; ${finite} of ${bins.length} bins here are finite)`
          : '';
        throw new ProfileCheckError(`${name} has ${bins[j]} in bin ${j}${hint}`, 'bins', i, j);
      }
    }
    if (bins.every((v) => v === v0)) {
      throw new ProfileCheckError(`${name} has no signal: every bin is equal (${v0})`, 'bins', i);
    }
  });
  if (set.flagged && set.flagged.length === set.bands.length) {
    throw new ProfileCheckError(
      `every channel is flagged (entirely NaN or constant): there is no signal to use`,
      'bands',
    );
  }
}
