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
import { streamToas } from '../io/read-toas.js';
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

/**
 * Corrected arrival times: every input column unchanged, plus dm_correction_us = −K·ΔDM(t)/ν²
 * (µs, the amount added), the corrected epoch as exact decimal text, and for residual tables
 * the corrected residual. K is the series' own constant, so K·ΔDM is the delay that was measured.
 * Two passes: the first validates every row and the series coverage, so bad input writes nothing.
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
  const first = await withProgress(o, `checking ${file}`, () =>
    streamToas(file, (row) => void correctionUs(row)),
  );
  if (outside && !o.extrapolate) {
    throw checkFailed(
      `${file}: ${outside} arrival time(s) lie outside the series (first: row ${firstOutside}); pass --extrapolate to hold the end values`,
    );
  }
  const nOutside = outside;
  const out = openOutput(o.out);
  try {
    let n = 0;
    await streamToas(file, async (row, raw, header, mjdNumber) => {
      const corr = correctionUs(row);
      const extra: Record<string, string | number> = {
        dm_correction_us: Number(corr.toPrecision(12)),
        mjd_corrected: formatMjd(
          addSeconds(row.epoch, corr * 1e-6),
          Math.max(mjdDecimals(row.mjdText), 18),
        ),
      };
      if (row.residualUs !== undefined)
        extra.residual_corrected_us = Number((row.residualUs + corr).toPrecision(12));
      const added = ADDED_COLUMNS.filter((c) => c in extra);
      let chunk: string;
      if (Array.isArray(raw)) {
        chunk =
          (n === 0 ? stringify([[...header.columns, ...added]]) : '') +
          stringify([[...raw, ...added.map((c) => String(extra[c]))]]);
      } else if (first.layout === 'ndjson') {
        chunk = jsonRow(raw, extra, mjdNumber) + '\n';
      } else {
        chunk = (n === 0 ? '[\n  ' : ',\n  ') + jsonRow(raw, extra, mjdNumber);
      }
      n++;
      await out.write(chunk);
    });
    if (first.layout === 'json') await out.write('\n]\n');
    await out.commit();
  } catch (e) {
    out.abort();
    throw e;
  }
  if (nOutside)
    note(
      o,
      `${nOutside} arrival time(s) outside the series were corrected with the end values (--extrapolate)`,
    );
}
