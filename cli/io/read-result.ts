// Read a result file a Sightline command wrote, and check it against the shared schema before
// it goes anywhere: a problem names the file and the field (or the line of a syntax error), on
// one short line.
import { readFile } from 'node:fs/promises';
import { oneLine } from '../../shared/formats/errors.js';
import { jsonSyntaxProblem, lineAndCharacter } from '../../shared/formats/json.js';
import { comparableResultSchema, type ComparableResultJson } from '../../shared/schemas/review.js';
import { usageError } from '../errors.js';

/** Characters of each zod issue, and issues, a message quotes. */
const ISSUE_CHARS = 120;
const ISSUES_SHOWN = 3;

function issueText(i: { path: PropertyKey[]; message: string }): string {
  const path = oneLine(i.path.map((k) => String(k).slice(0, 40)).join('.')) || '(top)';
  const message = oneLine(i.message);
  return `${path.length > 80 ? `${path.slice(0, 80)}…` : path}: ${message.length > ISSUE_CHARS ? `${message.slice(0, ISSUE_CHARS)}…` : message}`;
}

export async function readResult(path: string): Promise<ComparableResultJson> {
  const text = (await readFile(path, 'utf8')).replace(/^\uFEFF/, '');
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch {
    const problem = jsonSyntaxProblem(text);
    const where = problem ? lineAndCharacter(text, problem.offset) : undefined;
    throw usageError(
      `${path}: not JSON${problem && where ? ` (line ${where.line}, character ${where.char}: ${problem.reason})` : ''}`,
    );
  }
  const r = comparableResultSchema.safeParse(json);
  if (r.success) return r.data;
  const first = r.error.issues.slice(0, ISSUES_SHOWN).map(issueText);
  throw usageError(
    `${path}: not a Sightline dm-fit, dm-series, scatter-fit or scint result: ${first.join('; ')}${r.error.issues.length > ISSUES_SHOWN ? ` (+${r.error.issues.length - ISSUES_SHOWN} more)` : ''}`,
  );
}

/** Read and check every file before any is used, so a bad file stops the batch up front. */
export async function readResults(paths: string[]) {
  const out: { path: string; result: ComparableResultJson }[] = [];
  for (const p of paths) out.push({ path: p, result: await readResult(p) });
  return out;
}
