import { createHash } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { InputError } from '../../shared/formats/errors.js';
import { readNpy, type NpyArray } from '../../shared/profiles/npy.js';
import {
  type ProfileCheckOptions,
  parseJsonText,
  parseProfileJsonText,
  profilesFromNpy,
  SidecarError,
} from '../../shared/profiles/input.js';
import type { ProfileSet } from '../../shared/profiles/types.js';

export interface ProfileInputFile {
  path: string;
  sha256: string;
  /** number of bands */
  rows: number;
}

const NPY_MAGIC = Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]);

const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');

/**
 * Read profiles (interfaces.md "Profiles"): a JSON file, or a `.npy` array with its sidecar
 * JSON from `metaPath` or, by default, `PATH.json` beside it (`cube.npy` → `cube.npy.json`).
 * Every file read is listed in `input` with its SHA-256. InputErrors name the file at fault;
 * a missing input file (or a missing `metaPath`) propagates as ENOENT (exit 3). Only a missing
 * default sidecar is reported as invalid input, saying where it looked. `name` is what errors and
 * `input` call `path`, and what the type is told by (default `path`; the server passes an
 * upload's original name). `opts.allowFlagged` accepts flagged channels (cubes).
 */
export async function readProfiles(
  path: string,
  metaPath?: string,
  name: string = path,
  opts: ProfileCheckOptions = {},
): Promise<{ set: ProfileSet; input: ProfileInputFile[] }> {
  const bytes = await readFile(path);
  const lower = name.toLowerCase();
  const isNpy =
    lower.endsWith('.npy') || (!lower.endsWith('.json') && bytes.subarray(0, 6).equals(NPY_MAGIC));

  if (!isNpy) {
    if (bytes.length === 0) throw new InputError('the file is empty', { file: name });
    let set: ProfileSet;
    try {
      set = parseProfileJsonText(bytes.toString('utf8'), opts);
    } catch (e) {
      if (e instanceof InputError) throw e.inFile(name);
      throw e;
    }
    return { set, input: [{ path: name, sha256: sha256(bytes), rows: set.bands.length }] };
  }

  const sidecarPath = metaPath ?? `${path}.json`;
  let metaBytes: Buffer;
  try {
    metaBytes = await readFile(sidecarPath);
  } catch (e) {
    if (metaPath === undefined && (e as NodeJS.ErrnoException).code === 'ENOENT') {
      throw new InputError(
        `no sidecar JSON for this array: looked for ${sidecarPath} (give another with --meta FILE)`,
        { file: name },
      );
    }
    throw e;
  }

  const inFile = (file: string, e: unknown) => (e instanceof InputError ? e.inFile(file) : e);
  let array: NpyArray;
  try {
    array = readNpy(bytes);
  } catch (e) {
    throw inFile(name, e);
  }
  let meta: unknown;
  try {
    meta = parseJsonText(metaBytes.toString('utf8'));
  } catch (e) {
    throw inFile(sidecarPath, e);
  }
  let set: ProfileSet;
  try {
    set = profilesFromNpy(array, meta, opts);
  } catch (e) {
    throw inFile(e instanceof SidecarError ? sidecarPath : name, e);
  }
  const rows = set.bands.length;
  return {
    set,
    input: [
      { path: name, sha256: sha256(bytes), rows },
      { path: sidecarPath, sha256: sha256(metaBytes), rows },
    ],
  };
}
