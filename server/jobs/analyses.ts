import type { FitCliOptions, SeriesCliOptions } from '../../cli/run/dm.js';
import type { ScatterCliOptions } from '../../cli/run/scatter.js';
import {
  analysisRequestSchema,
  dmFitParamsSchema,
  dmFitResultSchema,
  dmSeriesParamsSchema,
  dmSeriesResultSchema,
  scatterFitParamsSchema,
  scatterFitResultSchema,
  type AnalysisErrorBody,
  type AnalysisKind,
  type AnalysisRequest,
  type DmFitParams,
  type DmFitResult,
  type DmSeriesParams,
  type DmSeriesResult,
  type ScatterFitParams,
  type ScatterFitResult,
} from '../../shared/schemas/index.js';

export { analysisRequestSchema, type AnalysisRequest };

/**
 * Server-side analyses: a validated request (shared/schemas/analysis.ts) becomes the options
 * object of the CLI command that does the same work, so an analysis run on the server computes
 * exactly what `sightline dm fit` / `dm series` / `scatter fit` compute for the same file.
 */

/** What a worker is given: the stored upload, the name it was uploaded under, the params. */
export type AnalysisTask =
  | { kind: 'dm-fit'; filePath: string; fileName: string; params: DmFitParams }
  | { kind: 'dm-series'; filePath: string; fileName: string; params: DmSeriesParams }
  | { kind: 'scatter-fit'; filePath: string; fileName: string; params: ScatterFitParams };

export interface AnalysisResults {
  'dm-fit': DmFitResult;
  'dm-series': DmSeriesResult;
  'scatter-fit': ScatterFitResult;
}
export type AnalysisResult = AnalysisResults[AnalysisKind];

/** The result schema each kind's output must pass. */
export const RESULT_SCHEMAS = {
  'dm-fit': dmFitResultSchema,
  'dm-series': dmSeriesResultSchema,
  'scatter-fit': scatterFitResultSchema,
} as const;

export const PARAM_SCHEMAS = {
  'dm-fit': dmFitParamsSchema,
  'dm-series': dmSeriesParamsSchema,
  'scatter-fit': scatterFitParamsSchema,
} as const;

/** An analysis that gave no result: bad input (the user's to fix) or a failure (ours). */
export class AnalysisError extends Error {
  readonly code: AnalysisErrorBody['code'];
  readonly details?: AnalysisErrorBody['details'];

  constructor(body: AnalysisErrorBody) {
    super(body.message);
    this.name = 'AnalysisError';
    this.code = body.code;
    if (body.details) this.details = body.details;
  }

  toJSON(): AnalysisErrorBody {
    return {
      code: this.code,
      message: this.message,
      ...(this.details ? { details: this.details } : {}),
    };
  }
}

/** The worker's answer: results and errors both travel as plain, cloneable values. */
export type WorkerReply<R = AnalysisResult> =
  { ok: true; result: R } | { ok: false; error: AnalysisErrorBody };

/** Options shared by every command when run for the server: no spinner, no notes. */
const quiet = (fileName: string) => ({ quiet: true, inputName: fileName });

/** `sightline dm fit` options, with the command's own defaults (cli/commands/dm.ts). */
export function dmFitOptions(p: DmFitParams, fileName: string): FitCliOptions {
  return {
    ...quiet(fileName),
    window: p.window_days,
    gap: p.gap_days,
    clip: p.clip_sigma,
    periodS: p.period_s,
    evolution: p.evolution ?? 0,
    scatter: p.scatter ?? 'none',
    alpha: p.alpha,
    refFreq: p.ref_freq_mhz ?? 1000,
    constant: p.constant,
  };
}

/** `sightline dm series` options (no solar-wind term: it needs positions from another file). */
export function dmSeriesOptions(p: DmSeriesParams, fileName: string): SeriesCliOptions {
  return {
    ...quiet(fileName),
    window: p.window_days,
    gap: p.gap_days,
    evolution: 0,
    smooth: p.smooth ?? 'none',
    constant: p.constant,
  };
}

/** `sightline scatter fit` options (cli/commands/scatter.ts defaults). */
export function scatterFitOptions(p: ScatterFitParams, fileName: string): ScatterCliOptions {
  return {
    ...quiet(fileName),
    model: p.model ?? 'gauss',
    alpha: p.alpha ?? 'free',
    refFreq: p.ref_freq_mhz ?? 1000,
    dm: p.dm,
  };
}

/** The task for a validated request, once the route has found the upload's file and name. */
export function analysisTask(
  request: AnalysisRequest,
  upload: { filePath: string; fileName: string },
): AnalysisTask {
  return { kind: request.kind, params: request.params, ...upload } as AnalysisTask;
}
