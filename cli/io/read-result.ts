// Read a result file a Sightline command wrote, and check it against the shared schema before
// it goes anywhere: a problem names the file and the field.
import { readFile } from 'node:fs/promises';
import { comparableResultSchema, type ComparableResultJson } from '../../shared/schemas/review.js';
import { usageError } from '../errors.js';

export async function readResult(path: string): Promise<ComparableResultJson> {
  const text = await readFile(path, 'utf8');
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    throw usageError(`${path}: not JSON (${(e as Error).message})`);
  }
  const r = comparableResultSchema.safeParse(json);
  if (r.success) return r.data;
  const first = r.error.issues
    .slice(0, 3)
    .map((i) => `${i.path.join('.') || '(top)'}: ${i.message}`);
  throw usageError(
    `${path}: not a Sightline dm-fit, dm-series, scatter-fit or scint result: ${first.join('; ')}${r.error.issues.length > 3 ? ` (+${r.error.issues.length - 3} more)` : ''}`,
  );
}

/** Read and check every file before any is used, so a bad file stops the batch up front. */
export async function readResults(paths: string[]) {
  const out: { path: string; result: ComparableResultJson }[] = [];
  for (const p of paths) out.push({ path: p, result: await readResult(p) });
  return out;
}
