// Worker-thread entry of `sightline batch` (cli/run/batch.ts), bundled by cli/build.mjs to
// dist/cli/batch-worker.js: one job per task — skip it when its result is up to date, else run
// the very function the single command runs, check the result against its shared schema, write it
// atomically with a sidecar that records what it was made from. `toas-correct` writes the
// corrected table itself, in the input's own layout, as `toas correct --out` does. Never throws:
// the reply is a plain value that survives the structured clone back.
import { createHash } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import { isDeepStrictEqual } from 'node:util';
import type { z } from 'zod';
import {
  batchSidecarSchema,
  type BatchAnalysis,
  type BatchSidecar,
} from '../../shared/schemas/batch.js';
import { dmFitResultSchema, type DmFitResult } from '../../shared/schemas/dm-fit.js';
import { dmRefineResultSchema, type DmRefineResult } from '../../shared/schemas/dm-refine.js';
import { dmSeriesResultSchema, type DmSeriesResult } from '../../shared/schemas/dm-series.js';
import { scatterFitResultSchema, type ScatterFitResult } from '../../shared/schemas/scatter-fit.js';
import { scintResultSchema, type ScintResult } from '../../shared/schemas/scint.js';
import { classify } from '../errors.js';
import { writeFileAtomic } from '../io/output.js';
import { json } from '../render.js';
import { refineCube, type RefineCliOptions } from './cubes.js';
import { runDmFit, runDmSeries, type FitCliOptions, type SeriesCliOptions } from './dm.js';
import { runScatter, type ScatterCliOptions } from './scatter.js';
import { runScint, type ScintCliOptions } from './scint.js';
import { runCorrect, type CorrectOptions } from './toas.js';

export interface BatchTask {
  analysis: BatchAnalysis;
  /** absolute path of the job's input */
  file: string;
  /** the job's options after defaults, file options made absolute */
  options: Record<string, unknown>;
  /** files the options name (template, meta, …): hashed with the result's own inputs */
  optionFiles: string[];
  outFile: string;
  sidecarFile: string;
  force: boolean;
}

/** What became of a job; `result_sha256` is that of the result file on disk. */
export type BatchOutcome =
  | { status: 'skipped' | 'done'; result_sha256: string }
  | { status: 'failed'; error: string; wrote: boolean };

/** `seconds`: the job's own time on the worker (not its wait in the queue). */
export type BatchReply = BatchOutcome & { seconds: number };

type JsonAnalysis = Exclude<BatchAnalysis, 'toas-correct'>;

const RESULT_SCHEMAS: Record<JsonAnalysis, z.ZodType> = {
  'dm-fit': dmFitResultSchema,
  'dm-series': dmSeriesResultSchema,
  'scatter-fit': scatterFitResultSchema,
  scint: scintResultSchema,
  'dm-refine': dmRefineResultSchema,
};

const sha256 = (data: Buffer | string) => createHash('sha256').update(data).digest('hex');

function hashIfThere(path: string): string | undefined {
  try {
    return sha256(readFileSync(path));
  } catch {
    return undefined;
  }
}

/**
 * The result on disk was made from these very files and options, and its check passed: the
 * result's SHA-256, else undefined.
 */
function upToDate(task: BatchTask): string | undefined {
  if (!existsSync(task.sidecarFile) || !existsSync(task.outFile)) return undefined;
  let side: BatchSidecar;
  try {
    side = batchSidecarSchema.parse(JSON.parse(readFileSync(task.sidecarFile, 'utf8')));
  } catch {
    return undefined;
  }
  const ok =
    side.status === 'done' &&
    side.analysis === task.analysis &&
    side.input === task.file &&
    isDeepStrictEqual(side.options, task.options) &&
    hashIfThere(task.outFile) === side.result_sha256 &&
    side.inputs.length > 0 &&
    side.inputs.every((i) => hashIfThere(i.path) === i.sha256);
  return ok ? side.result_sha256 : undefined;
}

async function compute(
  task: BatchTask & { analysis: JsonAnalysis },
): Promise<{ schema: string; input: unknown[] }> {
  const o = { ...task.options, quiet: true };
  switch (task.analysis) {
    case 'dm-fit':
      return runDmFit(task.file, o as unknown as FitCliOptions);
    case 'dm-series':
      return runDmSeries(task.file, o as unknown as SeriesCliOptions);
    case 'scatter-fit':
      return runScatter(task.file, o as unknown as ScatterCliOptions);
    case 'scint':
      return runScint(task.file, o as unknown as ScintCliOptions);
    case 'dm-refine':
      return refineCube(task.file, o as unknown as RefineCliOptions);
  }
}

/** The checks after which each single command exits 1 (cli/run/*.ts), as a message or none. */
function checkOf(
  analysis: JsonAnalysis,
  result: unknown,
  options: Record<string, unknown>,
): string | undefined {
  switch (analysis) {
    case 'dm-fit': {
      const r = result as DmFitResult;
      if (r.summary.n_fitted === 0)
        return 'no visit could be fitted (every visit is unconstrained)';
      if (options.strict && r.summary.n_unconstrained > 0)
        return `${r.summary.n_unconstrained} visit(s) unconstrained (strict)`;
      return undefined;
    }
    case 'dm-series':
      return (result as DmSeriesResult).points.length === 0
        ? 'the series has no fitted visits'
        : undefined;
    case 'scatter-fit': {
      const r = result as ScatterFitResult;
      if (r.bands.every((b) => b.status === 'failed')) return 'no band could be fitted';
      return r.power_law
        ? undefined
        : 'no τ(ν) power law: fewer than two bands with a measured τ (see the warnings)';
    }
    case 'scint':
      return (result as ScintResult).status === 'failed'
        ? 'the scintle widths could not be measured (see the warnings)'
        : undefined;
    case 'dm-refine': {
      const r = result as DmRefineResult;
      if (r.at_edge) return 'the S/N peaks at the edge of the range: widen it';
      return r.best.dm_err === null ? 'the S/N curve gives no DM uncertainty' : undefined;
    }
  }
}

/**
 * The job's files, hashed before it runs: should one change while it runs, the sidecar holds the
 * hash from before, and the next batch runs the job again instead of trusting the result. JSON
 * results list their inputs with the hash as read, so there only the option files need it.
 */
function hashBefore(task: BatchTask, withInput: boolean): { path: string; sha256: string }[] {
  return [...(withInput ? [task.file] : []), ...task.optionFiles].flatMap((f) => {
    const h = hashIfThere(f);
    return h ? [{ path: f, sha256: h }] : [];
  });
}

/** Sidecar of a finished job: the files it read (as the result says it read them, else `before`). */
function sidecarOf(
  task: BatchTask,
  resultSha256: string,
  read: { path: string; sha256: string }[],
  before: { path: string; sha256: string }[],
  problem: string | undefined,
): BatchSidecar {
  const inputs = new Map<string, string>();
  for (const i of read) inputs.set(i.path, i.sha256);
  for (const i of before) if (!inputs.has(i.path)) inputs.set(i.path, i.sha256);
  // a result that does not list its own input (none should): hashed now rather than not at all
  const h = inputs.has(task.file) ? undefined : hashIfThere(task.file);
  if (h) inputs.set(task.file, h);
  return {
    schema: 'sightline/batch-job@1',
    analysis: task.analysis,
    input: task.file,
    options: task.options,
    status: problem ? 'failed' : 'done',
    ...(problem ? { error: problem } : {}),
    result_sha256: resultSha256,
    inputs: [...inputs].map(([path, hash]) => ({ path, sha256: hash })),
  };
}

/** `toas correct FILE --series S --out OUT`: the corrected table, written atomically by the command. */
async function correctTask(task: BatchTask): Promise<BatchOutcome> {
  const o = task.options as { series: string; use: CorrectOptions['use']; extrapolate?: boolean };
  const before = hashBefore(task, true);
  try {
    await runCorrect(task.file, {
      series: o.series,
      use: o.use,
      extrapolate: o.extrapolate,
      out: task.outFile,
      quiet: true,
    });
  } catch (e) {
    return { status: 'failed', error: classify(e).message, wrote: false };
  }
  try {
    const resultSha256 = sha256(readFileSync(task.outFile));
    await writeFileAtomic(
      task.sidecarFile,
      json(sidecarOf(task, resultSha256, [], before, undefined)),
    );
    return { status: 'done', result_sha256: resultSha256 };
  } catch (e) {
    return { status: 'failed', error: classify(e).message, wrote: true };
  }
}

async function runTask(task: BatchTask): Promise<BatchOutcome> {
  try {
    const sha = task.force ? undefined : upToDate(task);
    if (sha) return { status: 'skipped', result_sha256: sha };
  } catch {
    // an unreadable earlier result is simply made again
  }
  if (task.analysis === 'toas-correct') return correctTask(task);
  const jsonTask = task as BatchTask & { analysis: JsonAnalysis };
  const before = hashBefore(task, false);
  let result: { schema: string; input: unknown[] };
  try {
    result = await compute(jsonTask);
  } catch (e) {
    return { status: 'failed', error: classify(e).message, wrote: false };
  }
  const checked = RESULT_SCHEMAS[jsonTask.analysis].safeParse(result);
  if (!checked.success) {
    const issue = checked.error.issues[0];
    return {
      status: 'failed',
      error: `internal error: the ${task.analysis} result does not match its schema at ${issue.path.join('.')}: ${issue.message}`,
      wrote: false,
    };
  }
  const problem = checkOf(jsonTask.analysis, result, task.options);
  let resultSha256: string;
  try {
    const text = json(result);
    resultSha256 = sha256(text);
    // the result's inputs as it read them, and the files its options name
    const sidecar = sidecarOf(
      task,
      resultSha256,
      result.input as { path: string; sha256: string }[],
      before,
      problem,
    );
    // the result first: a sidecar never vouches for a result that is not there
    await writeFileAtomic(task.outFile, text);
    await writeFileAtomic(task.sidecarFile, json(sidecar));
  } catch (e) {
    return { status: 'failed', error: classify(e).message, wrote: false };
  }
  return problem
    ? { status: 'failed', error: problem, wrote: true }
    : { status: 'done', result_sha256: resultSha256 };
}

export async function runBatchTask(task: BatchTask): Promise<BatchReply> {
  const started = performance.now();
  const reply = await runTask(task);
  return { ...reply, seconds: (performance.now() - started) / 1000 };
}

export default runBatchTask;
