import { createHash } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import { parse as parseCsv } from 'csv-parse/sync';
import { InputError, quoteInput } from '../../shared/formats/errors.js';
import { parseDecimal } from '../../shared/formats/numbers.js';
import { formatShape, readNpy, type NpyArray } from '../../shared/profiles/npy.js';
import { parseJsonText } from '../../shared/profiles/input.js';
import {
  dynspecFromArray,
  dynspecFromRows,
  dynspecMetaSchema,
  type DynSpec,
  type DynspecMeta,
} from '../../shared/scint/dynspec.js';
import type { InputFile } from '../../shared/schemas/common.js';

const sha256 = (b: Uint8Array) => createHash('sha256').update(b).digest('hex');

/**
 * The most fields a line of a dynamic-spectrum CSV may have: it has three columns (freq_mhz,
 * time_s, intensity), and room is left for others it ignores. A header of 10⁶ names is refused.
 */
export const DYNSPEC_CSV_MAX_FIELDS = 1024;
const NPY_MAGIC = Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]);

/** Parse and check a sidecar; its problems are reported against the sidecar file. */
function parseMeta(text: string, file: string): DynspecMeta {
  let value: unknown;
  try {
    value = parseJsonText(text);
  } catch (e) {
    throw e instanceof InputError ? e.inFile(file) : e;
  }
  const parsed = dynspecMetaSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const column = issue.path.join('.') || undefined;
    throw new InputError(issue.message, column ? { column } : {}).inFile(file);
  }
  return parsed.data;
}

/**
 * A dynamic spectrum (interfaces.md): a `.npy` [nchan, nsub] with a sidecar (`FILE.npy.json` or
 * `--meta`) { source, mjd, receiver?, freqs_mhz: [..] | {start, step}, times_s: [..] | {start,
 * step} }, or a CSV `freq_mhz,time_s,intensity` (one row per pixel; source and mjd from
 * `--meta`, else the file name). Errors name the file at fault, and the row, field or array
 * index; a missing input file propagates as ENOENT (exit 3).
 */
export async function readDynspec(
  path: string,
  metaPath?: string,
  name: string = path,
): Promise<{ ds: DynSpec; input: InputFile[] }> {
  const bytes = await readFile(path);
  const lower = name.toLowerCase();
  const isNpy =
    lower.endsWith('.npy') || (!lower.endsWith('.csv') && bytes.subarray(0, 6).equals(NPY_MAGIC));
  if (isNpy) {
    const sidecar = metaPath ?? `${path}.json`;
    let metaBytes: Buffer;
    try {
      metaBytes = await readFile(sidecar);
    } catch (e) {
      if (metaPath === undefined && (e as NodeJS.ErrnoException).code === 'ENOENT')
        throw new InputError(
          `no sidecar JSON for this array: looked for ${sidecar} (give another with --meta FILE)`,
          { file: name },
        );
      throw e;
    }
    const meta = parseMeta(metaBytes.toString('utf8'), sidecar);
    let arr: NpyArray;
    try {
      arr = readNpy(bytes);
    } catch (e) {
      throw e instanceof InputError ? e.inFile(name) : e;
    }
    if (arr.shape.length !== 2)
      throw new InputError(
        `a dynamic spectrum must be 2-D [nchan, nsub]; this one has shape ${formatShape(arr.shape)}`,
        { file: name, column: 'shape' },
      );
    const [nchan, nsub] = arr.shape;
    let ds: DynSpec;
    try {
      ds = dynspecFromArray(arr.data, nchan, nsub, meta);
    } catch (e) {
      if (!(e instanceof InputError)) throw e;
      const col = e.location.column ?? '';
      throw e.inFile(col.startsWith('data') || col === 'shape' ? name : sidecar);
    }
    return {
      ds,
      input: [
        { path: name, sha256: sha256(bytes), rows: nchan },
        { path: sidecar, sha256: sha256(metaBytes), rows: nchan },
      ],
    };
  }

  // CSV, long form
  let meta: Omit<DynspecMeta, 'freqs_mhz' | 'times_s'> = {
    source: basename(name).replace(/\.csv$/i, ''),
  };
  const input: InputFile[] = [];
  if (metaPath) {
    const metaBytes = await readFile(metaPath);
    meta = parseMeta(metaBytes.toString('utf8'), metaPath);
    input.push({ path: metaPath, sha256: sha256(metaBytes), rows: 1 });
  }
  let records: string[][];
  /** the line on which each record ends (blank lines are skipped; a quoted field may span lines) */
  const lineOf: number[] = [];
  try {
    records = parseCsv(bytes, {
      bom: true,
      skip_empty_lines: true,
      relax_column_count: false,
      on_record: (record: string[], info: { lines: number }) => {
        if (record.length > DYNSPEC_CSV_MAX_FIELDS) {
          throw new InputError(
            `${record.length} fields on one line; a dynamic-spectrum CSV has the columns freq_mhz, time_s, intensity and may have at most ${DYNSPEC_CSV_MAX_FIELDS}`,
            { file: name, line: info.lines },
          );
        }
        lineOf.push(info.lines);
        return record;
      },
    });
  } catch (e) {
    if (e instanceof InputError) throw e;
    const line = (e as { lines?: unknown }).lines;
    throw new InputError(
      `not valid CSV (${(e as Error).message})`,
      typeof line === 'number' && line >= 1 ? { file: name, line } : { file: name },
    );
  }
  if (records.length < 2) throw new InputError('no rows after the header', { file: name });
  const head = records[0].map((h) => h.trim());
  const col = (c: string) => {
    const i = head.indexOf(c);
    if (i < 0)
      throw new InputError(`missing column "${c}" (required: freq_mhz, time_s, intensity)`, {
        file: name,
        line: 1,
        column: c,
      });
    return i;
  };
  const [fi, ti, vi] = [col('freq_mhz'), col('time_s'), col('intensity')];
  const n = records.length - 1;
  const freq = new Float64Array(n);
  const time = new Float64Array(n);
  const value = new Float64Array(n);
  for (let r = 1; r <= n; r++) {
    const rec = records[r];
    const num = (i: number, c: string, nanOk: boolean) => {
      const raw = (rec[i] ?? '').trim();
      if (nanOk && (raw === '' || raw.toLowerCase() === 'nan')) return NaN;
      const v = parseDecimal(raw);
      if (v === undefined)
        throw new InputError(`${quoteInput(raw)} is not a finite number`, {
          file: name,
          row: r,
          line: lineOf[r],
          column: c,
        });
      return v;
    };
    freq[r - 1] = num(fi, 'freq_mhz', false);
    time[r - 1] = num(ti, 'time_s', false);
    value[r - 1] = num(vi, 'intensity', true);
  }
  let ds: DynSpec;
  try {
    ds = dynspecFromRows(freq, time, value, meta);
  } catch (e) {
    if (!(e instanceof InputError)) throw e;
    // a row number from the grid check: add the line it is on
    const row = e.location.row;
    const line = row !== undefined && e.location.column === 'freq_mhz' ? lineOf[row] : undefined;
    throw line === undefined || e.location.line !== undefined
      ? e.inFile(name)
      : new InputError(e.reason, { ...e.location, file: name, line });
  }
  input.unshift({ path: name, sha256: sha256(bytes), rows: n });
  return { ds, input };
}
