import { readFileSync } from 'node:fs';
import { stringify } from 'csv-stringify/sync';
import { dmSeriesResultSchema, type DmSeriesResult } from '../../shared/schemas/dm-series.js';
import { dmCurve } from '../../shared/series/correction.js';
import { InputError } from '../../shared/formats/errors.js';
import { addSeconds, formatMjd, mjdDecimals, toMjdNumber } from '../../shared/time/mjd.js';
import { delayToInfinityS } from '../../shared/physics/dispersion.js';
import type { ToaRow } from '../../shared/formats/toas.js';
import { note, withProgress, type CommonOptions } from '../common.js';
import { checkFailed, usageError } from '../errors.js';
import { streamToas, toaLayout } from '../io/read-toas.js';
import { openOutput } from '../io/output.js';

export interface CorrectOptions extends CommonOptions {
  series: string;
  use: 'auto' | 'smooth' | 'points';
  extrapolate?: boolean;
}

export function readSeries(path: string): DmSeriesResult {
  let value: unknown;
  try {
    value = JSON.parse(readFileSync(path, 'utf8'));
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code) throw e;
    throw new InputError(`not valid JSON (${(e as Error).message})`, { file: path });
  }
  const parsed = dmSeriesResultSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new InputError(`not a dm-series result: ${issue.message}`, {
      file: path,
      column: issue.path.join('.'),
    });
  }
  return parsed.data;
}

/** Columns added to every row, in this order. */
export const ADDED_COLUMNS = [
  'dm_correction_us',
  'mjd_corrected',
  'residual_corrected_us',
] as const;

/** JSON text of a row, with mjd written back as a bare number when the row had it so. */
function jsonRow(
  raw: Record<string, unknown>,
  extra: Record<string, string | number>,
  mjdNumber: boolean,
): string {
  if (!mjdNumber) return JSON.stringify({ ...raw, ...extra });
  // a placeholder no input can contain (a NUL), swapped for the original digits afterwards
  const text = JSON.stringify({ ...raw, mjd: '\u0000mjd', ...extra });
  return text.replace('"\\u0000mjd"', String(raw.mjd));
}

/** A CSV field csv-stringify (default options) would quote. */
const NEEDS_QUOTES = /[",\r\n]/;

/**
 * One CSV record as csv-stringify writes it, without its line break: plain fields joined,
 * csv-stringify itself when a field needs quotes.
 */
function csvRecord(fields: string[]): string {
  for (let i = 0; i < fields.length; i++)
    if (NEEDS_QUOTES.test(fields[i])) return stringify([fields]).slice(0, -1);
  return fields.join(',');
}

/**
 * `String(Number(x.toPrecision(12)))`, the text of x rounded to 12 significant digits, made
 * quicker: in fixed notation that text is toPrecision's own less its trailing zeros (a decimal
 * of at most 12 digits is the shortest text of the double nearest it, and both notations are
 * fixed in toPrecision's fixed range); exponent notation takes the long way.
 */
export function text12(x: number): string {
  const t = x.toPrecision(12);
  if (t.indexOf('e') >= 0 || t.indexOf('.') < 0) return String(Number(t));
  let end = t.length;
  while (t.charCodeAt(end - 1) === 48 /* 0 */) end--;
  if (t.charCodeAt(end - 1) === 46 /* . */) end--;
  const r = t.slice(0, end);
  return r === '-0' ? '0' : r;
}

/**
 * Corrected arrival times: every input column unchanged, plus dm_correction_us = −K·ΔDM(t)/ν²
 * (µs, the amount added), the corrected epoch as exact decimal text, and for residual tables
 * the corrected residual. K is the series' own constant, so K·ΔDM is the delay that was measured.
 * Bad input writes nothing: written to a file (--out), one pass into the temporary file that
 * only a complete run renames into place; written to stdout, two passes, the first validating
 * every row and the series coverage before anything is written.
 */
export async function runCorrect(file: string, o: CorrectOptions): Promise<void> {
  if (o.format || o.json)
    throw usageError("toas correct writes the input file's own layout; drop --format/--json");
  const series = readSeries(o.series);
  const model = dmCurve(series, o.use);
  const k = series.constant as { name: 'conventional' | 'physical'; value: number };
  let outside = 0;
  let firstOutside: number | undefined;
  const correctionUs = (row: ToaRow) => {
    const d = model.at(row.source, toMjdNumber(row.epoch));
    if (!d) {
      const known = series.sources.some((x) => x.source === row.source);
      throw new InputError(
        known
          ? `source "${row.source}" has no fitted visits in the series ${o.series}, so there is no DM to correct with`
          : `source "${row.source}" is not in the series ${o.series} (it has ${model.sources.join(', ') || 'none'})`,
        { row: row.row, column: 'source' },
      );
    }
    if (d.extrapolated) {
      outside++;
      firstOutside ??= row.row;
    }
    return -delayToInfinityS(k, d.ddm, row.freqMhz) * 1e6;
  };
  const outsideFailure = () =>
    checkFailed(
      `${file}: ${outside} arrival time(s) lie outside the series (first: row ${firstOutside}); pass --extrapolate to hold the end values`,
    );
  const toFile = o.out !== undefined && o.out !== '-';
  if (!toFile) {
    await withProgress(o, `checking ${file}`, () =>
      streamToas(file, (row) => void correctionUs(row)),
    );
    if (outside && !o.extrapolate) throw outsideFailure();
    outside = 0;
    firstOutside = undefined;
  }
  const layout = toaLayout(file);
  const out = openOutput(o.out);
  try {
    let n = 0;
    // rows are gathered into pieces of ~128 kB: one write (and one wait) per piece, and the
    // text waiting to be written stays young (cheap to collect)
    let pending: string[] = [];
    let pendingChars = 0;
    const flush = () => {
      const text = pending.join('');
      pending = [];
      pendingChars = 0;
      return out.write(text);
    };
    await withProgress(o, `correcting ${file}`, () =>
      streamToas(file, (row, raw, header, mjdNumber) => {
        const corr = correctionUs(row);
        const mjdCorrected = formatMjd(
          addSeconds(row.epoch, corr * 1e-6),
          Math.max(mjdDecimals(row.mjdText), 18),
        );
        const residual = row.residualUs;
        let chunk: string;
        if (Array.isArray(raw)) {
          // the added values are numbers and digits, never quoted: appended as text
          chunk =
            (n === 0
              ? csvRecord([
                  ...header.columns,
                  ...ADDED_COLUMNS.slice(0, residual === undefined ? 2 : 3),
                ]) + '\n'
              : '') +
            csvRecord(raw) +
            ',' +
            text12(corr) +
            ',' +
            mjdCorrected +
            (residual === undefined ? '\n' : ',' + text12(residual + corr) + '\n');
        } else {
          const extra: Record<string, string | number> = {
            dm_correction_us: Number(corr.toPrecision(12)),
            mjd_corrected: mjdCorrected,
          };
          if (residual !== undefined)
            extra.residual_corrected_us = Number((residual + corr).toPrecision(12));
          chunk =
            layout === 'ndjson'
              ? jsonRow(raw, extra, mjdNumber) + '\n'
              : (n === 0 ? '[\n  ' : ',\n  ') + jsonRow(raw, extra, mjdNumber);
        }
        n++;
        pending.push(chunk);
        pendingChars += chunk.length;
        if (pendingChars >= 1 << 17) return flush();
      }),
    );
    if (pending.length) await flush();
    if (layout === 'json') await out.write('\n]\n');
    if (outside && !o.extrapolate) throw outsideFailure();
    await out.commit();
  } catch (e) {
    out.abort();
    throw e;
  }
  if (outside)
    note(
      o,
      `${outside} arrival time(s) outside the series were corrected with the end values (--extrapolate)`,
    );
}
