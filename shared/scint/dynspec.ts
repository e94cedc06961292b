import { z } from 'zod';
import { InputError } from '../formats/errors.js';
import { EpochSyntaxError, parseMjd } from '../time/mjd.js';

/**
 * A dynamic spectrum: intensity over frequency channels (rows, ascending frequency) and
 * sub-integrations (columns), on a uniform grid. Pixels the producer marked as missing (NaN) are
 * flagged in `inputMask`.
 */
export interface DynSpec {
  source: string;
  mjd: string | null;
  receiver: string | null;
  nchan: number;
  nsub: number;
  /** channel centre frequencies, ascending, uniformly spaced by dfMhz */
  freqs: Float64Array;
  /** sub-integration times from the start, seconds, uniformly spaced by dtS */
  times: Float64Array;
  dfMhz: number;
  dtS: number;
  /** nchan × nsub, row-major (one row per channel); flagged pixels hold 0 */
  data: Float64Array;
  /** 1 where the input had no value (NaN) */
  inputMask: Uint8Array;
}

/** Fewest channels and sub-integrations an analysis needs. */
export const MIN_CHANNELS = 8;
export const MIN_SUBINTS = 8;
/**
 * The most cells a grid built from long-form rows may span (2²⁴ = 16 777 216, e.g. 4096 channels
 * × 4096 sub-integrations): rows whose distinct frequencies and times are scattered would
 * otherwise ask for n² cells from n rows.
 */
export const MAX_GRID_CELLS = 2 ** 24;
/** Relative departure from a uniform grid that is accepted. */
const GRID_TOLERANCE = 1e-3;

const axisSchema = z.union([
  z.array(z.number(), { error: 'expected an array of numbers' }),
  z.object({ start: z.number(), step: z.number() }, { error: 'expected { start, step }' }),
]);

export const dynspecMetaSchema = z.object(
  {
    source: z.string({ error: 'expected a string' }).min(1, 'the source name is empty'),
    mjd: z.union([z.string(), z.number()]).optional(),
    receiver: z.string().optional(),
    freqs_mhz: axisSchema.optional(),
    times_s: axisSchema.optional(),
  },
  { error: 'a sidecar must hold one JSON object { source, mjd, freqs_mhz, times_s }' },
);
export type DynspecMeta = z.infer<typeof dynspecMetaSchema>;

/** An axis from the sidecar: explicit values, or { start, step } expanded to n values. */
function axisValues(
  axis: DynspecMeta['freqs_mhz'],
  n: number,
  field: 'freqs_mhz' | 'times_s',
): Float64Array {
  if (axis === undefined)
    throw new InputError(`missing "${field}" (an array, or { start, step })`, { column: field });
  if (Array.isArray(axis)) {
    if (axis.length !== n)
      throw new InputError(
        `${field} lists ${axis.length} values but the array has ${n} along this axis`,
        { column: field },
      );
    return Float64Array.from(axis);
  }
  if (!(axis.step !== 0 && Number.isFinite(axis.step)))
    throw new InputError(`${field}.step must be a non-zero number, found ${axis.step}`, {
      column: `${field}.step`,
    });
  return Float64Array.from({ length: n }, (_, i) => axis.start + i * axis.step);
}

/** Check an axis is uniform; returns its step (may be negative for descending). */
function uniformStep(v: Float64Array, field: string): number {
  const n = v.length;
  const step = (v[n - 1] - v[0]) / (n - 1);
  if (!(Number.isFinite(step) && step !== 0))
    throw new InputError(`${field} must change from the first value to the last`, {
      column: field,
    });
  for (let i = 1; i < n; i++) {
    const d = v[i] - v[i - 1];
    if (!Number.isFinite(v[i]) || Math.abs(d - step) > GRID_TOLERANCE * Math.abs(step)) {
      throw new InputError(
        `${field} is not uniformly spaced: step ${i} is ${d} where ${step} was expected (the 2-D autocorrelation needs a uniform grid)`,
        { column: `${field}[${i}]`, row: i + 1 },
      );
    }
  }
  return step;
}

function mjdText(v: DynspecMeta['mjd']): string | null {
  if (v === undefined) return null;
  const t = String(v).trim();
  try {
    parseMjd(t);
  } catch (e) {
    if (e instanceof EpochSyntaxError) throw new InputError(e.message, { column: 'mjd' });
    throw e;
  }
  return t;
}

/**
 * A dynamic spectrum from an [nchan, nsub] array (row-major) and its sidecar. Frequencies may
 * descend (the rows are then reversed); both axes must be uniform. NaN pixels are flagged;
 * infinities are refused with their position. Errors carry the sidecar field or the array
 * index; the caller adds the file.
 */
export function dynspecFromArray(
  data: Float64Array,
  nchan: number,
  nsub: number,
  meta: DynspecMeta,
): DynSpec {
  if (nchan < MIN_CHANNELS || nsub < MIN_SUBINTS)
    throw new InputError(
      `a dynamic spectrum needs at least ${MIN_CHANNELS} channels and ${MIN_SUBINTS} sub-integrations; this one is ${nchan} × ${nsub}`,
      { column: 'shape' },
    );
  let freqs = axisValues(meta.freqs_mhz, nchan, 'freqs_mhz');
  const times = axisValues(meta.times_s, nsub, 'times_s');
  for (let i = 0; i < nchan; i++)
    if (!(freqs[i] > 0))
      throw new InputError(`frequencies must be positive MHz, found ${freqs[i]}`, {
        column: `freqs_mhz[${i}]`,
        row: i + 1,
      });
  let df = uniformStep(freqs, 'freqs_mhz');
  const dt = uniformStep(times, 'times_s');
  if (dt < 0) throw new InputError('times_s must increase', { column: 'times_s' });
  const out = new Float64Array(nchan * nsub);
  const mask = new Uint8Array(nchan * nsub);
  const flip = df < 0;
  for (let c = 0; c < nchan; c++) {
    const src = (flip ? nchan - 1 - c : c) * nsub;
    for (let t = 0; t < nsub; t++) {
      const v = data[src + t];
      if (Number.isNaN(v)) {
        mask[c * nsub + t] = 1;
        continue;
      }
      if (!Number.isFinite(v))
        throw new InputError(
          `${v} at channel ${(flip ? nchan - 1 - c : c) + 1}, sub-integration ${t + 1}`,
          {
            column: `data[${flip ? nchan - 1 - c : c}, ${t}]`,
          },
        );
      out[c * nsub + t] = v;
    }
  }
  if (flip) {
    freqs = freqs.reverse();
    df = -df;
  }
  return {
    source: meta.source.trim(),
    mjd: mjdText(meta.mjd),
    receiver: meta.receiver?.trim() || null,
    nchan,
    nsub,
    freqs,
    times,
    dfMhz: df,
    dtS: dt,
    data: out,
    inputMask: mask,
  };
}

/**
 * A dynamic spectrum from long-form rows (freq_mhz, time_s, intensity): the distinct
 * frequencies and times must form a uniform grid; a cell without a row is flagged, a cell with
 * two rows is refused (naming both rows). `rowOf` gives each entry's data row for messages.
 */
export function dynspecFromRows(
  freq: Float64Array,
  time: Float64Array,
  value: Float64Array,
  meta: Omit<DynspecMeta, 'freqs_mhz' | 'times_s'>,
): DynSpec {
  const fs = [...new Set(freq)].sort((a, b) => a - b);
  const ts = [...new Set(time)].sort((a, b) => a - b);
  const fi = new Map(fs.map((f, i) => [f, i]));
  const ti = new Map(ts.map((t, i) => [t, i]));
  const nchan = fs.length;
  const nsub = ts.length;
  if (nchan * nsub > MAX_GRID_CELLS) {
    throw new InputError(
      `the rows hold ${nchan} distinct frequencies and ${nsub} distinct times, a grid of ${nchan * nsub} cells; a dynamic spectrum may span at most ${MAX_GRID_CELLS} (2^24) cells`,
      { column: 'freq_mhz' },
    );
  }
  const grid = new Float64Array(nchan * nsub).fill(NaN);
  const seen = new Int32Array(nchan * nsub).fill(-1);
  for (let r = 0; r < freq.length; r++) {
    const k = fi.get(freq[r])! * nsub + ti.get(time[r])!;
    if (seen[k] >= 0)
      throw new InputError(
        `rows ${seen[k] + 1} and ${r + 1} both give ${freq[r]} MHz at ${time[r]} s`,
        { row: r + 1, column: 'freq_mhz' },
      );
    seen[k] = r;
    grid[k] = value[r];
  }
  return dynspecFromArray(grid, nchan, nsub, {
    ...meta,
    freqs_mhz: fs,
    times_s: ts,
  });
}
