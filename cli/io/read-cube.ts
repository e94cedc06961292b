import { cubeFromProfiles, type Cube } from '../../shared/cubes/cube.js';
import type { ProfileSet } from '../../shared/profiles/types.js';
import { readProfiles, type ProfileInputFile } from './read-profiles.js';

/**
 * A profile cube (interfaces.md "Profiles": JSON, or `.npy` [nchan, nbin] with a sidecar).
 * Channels that are entirely NaN or constant count as flagged rather than as bad input; any
 * other non-finite bin is refused with its channel and bin.
 */
export async function readCube(
  path: string,
  meta?: string,
  name: string = path,
): Promise<{ cube: Cube; input: ProfileInputFile[] }> {
  const { set, input } = await readProfiles(path, meta, name, { allowFlagged: true });
  return { cube: cubeFromProfiles(set), input };
}

/** A template: a profile file with one band (or one per cube channel); no flagged bands. */
export async function readTemplate(
  path: string,
): Promise<{ set: ProfileSet; input: ProfileInputFile[] }> {
  return readProfiles(path);
}
