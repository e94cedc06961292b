import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Piscina } from 'piscina';
import { distDir } from '../paths.js';
import type { AnalysisKind } from '../../shared/schemas/analysis.js';
import {
  AnalysisError,
  type AnalysisResults,
  type AnalysisTask,
  type WorkerReply,
} from './analyses.js';

export const WORKER_FILE_NAME = 'analysis-worker.js';

/**
 * Where the built worker is: beside this module when it is bundled into dist/server/, and in
 * the package's dist/server/ otherwise (from source under Vitest or tsx, or from a CLI chunk). Worker threads
 * run plain Node, which cannot load the TypeScript entry, so both use the esbuild bundle that
 * cli/build.mjs writes (`npm test` builds it first).
 */
export function defaultWorkerFile(): string {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const candidates = [path.join(here, WORKER_FILE_NAME), distDir('server', WORKER_FILE_NAME)];
  const found = candidates.find((f) => existsSync(f));
  if (!found) {
    throw new Error(
      `the analysis worker is not built (looked for ${candidates.join(' and ')}): run \`node cli/build.mjs\``,
    );
  }
  return found;
}

export interface AnalysisPoolOptions {
  /** worker threads at most (default: one fewer than the CPUs, so requests keep one; ≥ 1) */
  maxThreads?: number;
  /** the bundled worker entry (default: `defaultWorkerFile()`) */
  workerFile?: string;
}

export interface AnalysisPool {
  /** Run an analysis on a worker thread; rejects with an `AnalysisError` when it gives no result. */
  run<K extends AnalysisKind>(
    task: Extract<AnalysisTask, { kind: K }>,
  ): Promise<AnalysisResults[K]>;
  /** Finish the tasks already given, then stop the threads. */
  close(): Promise<void>;
}

/** One fewer than the CPUs, so requests keep one; at least 1. */
export const defaultAnalysisThreads = () => Math.max(1, availableParallelism() - 1);

/** Analyses off the request thread, on a piscina worker pool (design.md "worker pools"). */
export function createAnalysisPool(options: AnalysisPoolOptions = {}): AnalysisPool {
  const maxThreads = options.maxThreads ?? defaultAnalysisThreads();
  if (!Number.isInteger(maxThreads) || maxThreads < 1)
    throw new RangeError(`maxThreads must be a positive integer, not ${maxThreads}`);
  const filename = options.workerFile ?? defaultWorkerFile();
  if (!existsSync(filename)) throw new Error(`no analysis worker at ${filename}`);
  const piscina = new Piscina({ filename, minThreads: 1, maxThreads });
  // piscina would start new threads for work given after close(); a closed pool stays closed
  let closed = false;

  return {
    async run(task) {
      if (closed)
        throw new AnalysisError({ code: 'failed', message: 'the analysis pool is closed' });
      let reply: WorkerReply;
      try {
        reply = (await piscina.run(task)) as WorkerReply;
      } catch (e) {
        // the worker itself broke (crashed, could not load, pool closed): never the user's input
        throw new AnalysisError({
          code: 'failed',
          message: `the analysis worker failed: ${e instanceof Error ? e.message : String(e)}`,
        });
      }
      if (!reply.ok) throw new AnalysisError(reply.error);
      return reply.result as AnalysisResults[typeof task.kind];
    },
    async close() {
      closed = true;
      await piscina.close();
    },
  };
}
