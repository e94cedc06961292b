// Worker-thread entry of the analysis pool (server/jobs/pool.ts), bundled by cli/build.mjs to
// dist/server/analysis-worker.js: runs the very code the CLI runs on an uploaded file and answers
// with a plain value (result or error) that survives the structured clone back to the server.
import { open } from 'node:fs/promises';
import { CliError, EXIT } from '../../cli/errors.js';
import { runDmFit, runDmSeries } from '../../cli/run/dm.js';
import { runScatter } from '../../cli/run/scatter.js';
import { InputError } from '../../shared/formats/errors.js';
import type { AnalysisErrorBody } from '../../shared/schemas/analysis.js';
import {
  dmFitOptions,
  dmSeriesOptions,
  PARAM_SCHEMAS,
  RESULT_SCHEMAS,
  scatterFitOptions,
  type AnalysisResult,
  type AnalysisTask,
  type WorkerReply,
} from './analyses.js';

const NPY_MAGIC = Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]);

async function isNpy(task: AnalysisTask): Promise<boolean> {
  if (task.fileName.toLowerCase().endsWith('.npy')) return true;
  const file = await open(task.filePath, 'r');
  try {
    const head = Buffer.alloc(NPY_MAGIC.length);
    const { bytesRead } = await file.read(head, 0, head.length, 0);
    return bytesRead === head.length && head.equals(NPY_MAGIC);
  } finally {
    await file.close();
  }
}

async function compute(task: AnalysisTask): Promise<AnalysisResult> {
  const { filePath, fileName } = task;
  switch (task.kind) {
    case 'dm-fit':
      return runDmFit(filePath, dmFitOptions(task.params, fileName));
    case 'dm-series':
      return runDmSeries(filePath, dmSeriesOptions(task.params, fileName));
    case 'scatter-fit':
      // an array's frequencies and period live in a sidecar JSON that one upload cannot carry
      if (await isNpy(task)) {
        throw new InputError(
          'a .npy array needs its sidecar JSON, which a single upload cannot carry: upload the profiles as JSON ({ source, mjd, period_s, profiles: [{ freq_mhz, bins }] })',
          { file: fileName },
        );
      }
      return runScatter(filePath, scatterFitOptions(task.params, fileName));
  }
}

/** The storage path is the server's business: messages name the upload as the user knows it. */
const scrub = (text: string, task: AnalysisTask) => text.split(task.filePath).join(task.fileName);

/** Anything thrown, as the user should see it (cli/errors.ts `classify`, minus exit codes). */
export function describeError(e: unknown, task: AnalysisTask): AnalysisErrorBody {
  if (e instanceof InputError) {
    const { file, row, line, column } = e.location;
    return {
      code: 'invalid_input',
      message: scrub(e.message, task),
      details: {
        ...(file !== undefined ? { file: scrub(file, task) } : {}),
        ...(row !== undefined ? { row } : {}),
        ...(line !== undefined ? { line } : {}),
        ...(column !== undefined ? { column } : {}),
        reason: e.reason,
      },
    };
  }
  if (e instanceof CliError) {
    return {
      code: e.exitCode === EXIT.usage ? 'invalid_input' : 'failed',
      message: scrub(e.message, task),
    };
  }
  const err = e as NodeJS.ErrnoException;
  if (err && typeof err.code === 'string' && err.syscall) {
    return { code: 'failed', message: `the stored upload could not be read (${err.code})` };
  }
  if (e instanceof RangeError) return { code: 'invalid_input', message: scrub(e.message, task) };
  const message = e instanceof Error ? e.message : String(e);
  return { code: 'failed', message: `internal error: ${scrub(message, task)}` };
}

/** Run one task; never throws (a thrown value would lose its fields on the way back). */
export async function runAnalysis(task: AnalysisTask): Promise<WorkerReply> {
  const params = PARAM_SCHEMAS[task.kind].safeParse(task.params);
  if (!params.success) {
    const issue = params.error.issues[0];
    return {
      ok: false,
      error: {
        code: 'invalid_input',
        message: `params.${issue.path.join('.')}: ${issue.message}`,
      },
    };
  }
  let result: AnalysisResult;
  try {
    result = await compute({ ...task, params: params.data } as AnalysisTask);
  } catch (e) {
    return { ok: false, error: describeError(e, task) };
  }
  // the contract of interfaces.md: a result the schema refuses is never handed on
  const checked = RESULT_SCHEMAS[task.kind].safeParse(result);
  if (!checked.success) {
    const issue = checked.error.issues[0];
    return {
      ok: false,
      error: {
        code: 'failed',
        message: `internal error: the ${task.kind} result does not match its schema at ${issue.path.join('.')}: ${issue.message}`,
      },
    };
  }
  return { ok: true, result };
}

export default runAnalysis;
