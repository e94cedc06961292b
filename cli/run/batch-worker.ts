// Worker-thread entry of `sightline batch` (cli/run/batch.ts), bundled by cli/build.mjs to
// dist/cli/batch-worker.js: one job per task — skip it when its result is up to date, else run
// the very function the single command runs, check the result against its shared schema, write it
// atomically with a sidecar that records what it was made from. Never throws: the reply is a
// plain value that survives the structured clone back.
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

export type BatchReply =
  { status: 'skipped' } | { status: 'done' } | { status: 'failed'; error: string; wrote: boolean };

const RESULT_SCHEMAS: Record<BatchAnalysis, z.ZodType> = {
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

/** The result on disk was made from these very files and options, and its check passed. */
function upToDate(task: BatchTask): boolean {
  if (!existsSync(task.sidecarFile) || !existsSync(task.outFile)) return false;
  let side: BatchSidecar;
  try {
    side = batchSidecarSchema.parse(JSON.parse(readFileSync(task.sidecarFile, 'utf8')));
  } catch {
    return false;
  }
  return (
    side.status === 'done' &&
    side.analysis === task.analysis &&
    side.input === task.file &&
    isDeepStrictEqual(side.options, task.options) &&
    hashIfThere(task.outFile) === side.result_sha256 &&
    side.inputs.length > 0 &&
    side.inputs.every((i) => hashIfThere(i.path) === i.sha256)
  );
}

async function compute(task: BatchTask): Promise<{ schema: string; input: unknown[] }> {
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
  analysis: BatchAnalysis,
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

export async function runBatchTask(task: BatchTask): Promise<BatchReply> {
  try {
    if (!task.force && upToDate(task)) return { status: 'skipped' };
  } catch {
    // an unreadable earlier result is simply made again
  }
  let result: { schema: string; input: unknown[] };
  try {
    result = await compute(task);
  } catch (e) {
    return { status: 'failed', error: classify(e).message, wrote: false };
  }
  const checked = RESULT_SCHEMAS[task.analysis].safeParse(result);
  if (!checked.success) {
    const issue = checked.error.issues[0];
    return {
      status: 'failed',
      error: `internal error: the ${task.analysis} result does not match its schema at ${issue.path.join('.')}: ${issue.message}`,
      wrote: false,
    };
  }
  const problem = checkOf(task.analysis, result, task.options);
  try {
    const text = json(result);
    // the result's inputs as it read them, and the files its options name
    const inputs = new Map<string, string>();
    for (const i of result.input as { path: string; sha256: string }[])
      inputs.set(i.path, i.sha256);
    for (const f of [task.file, ...task.optionFiles]) {
      const h = inputs.has(f) ? undefined : hashIfThere(f);
      if (h) inputs.set(f, h);
    }
    const sidecar: BatchSidecar = {
      schema: 'sightline/batch-job@1',
      analysis: task.analysis,
      input: task.file,
      options: task.options,
      status: problem ? 'failed' : 'done',
      ...(problem ? { error: problem } : {}),
      result_sha256: sha256(text),
      inputs: [...inputs].map(([path, hash]) => ({ path, sha256: hash })),
    };
    // the result first: a sidecar never vouches for a result that is not there
    await writeFileAtomic(task.outFile, text);
    await writeFileAtomic(task.sidecarFile, json(sidecar));
  } catch (e) {
    return { status: 'failed', error: classify(e).message, wrote: false };
  }
  return problem ? { status: 'failed', error: problem, wrote: true } : { status: 'done' };
}

export default runBatchTask;
