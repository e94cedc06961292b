// `sightline batch MANIFEST`: many analyses on a worker pool (piscina; the worker is
// cli/run/batch-worker.ts, bundled to dist/cli/batch-worker.js), resumable, one JSON line per
// finished job on stdout; and `sightline runs push --pending DIR`.
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import {
  PATH_OPTIONS,
  pendingPushSchema,
  type BatchAnalysis,
  type BatchLine,
  type BatchManifest,
  type PendingPush,
} from '../../shared/schemas/batch.js';
import { COMPARABLE_KINDS } from '../../shared/schemas/review.js';
import { distDir } from '../../server/paths.js';
import { formatOf, note, type CommonOptions } from '../common.js';
import { CliError, EXIT, checkFailed, classify, ioFailure, usageError } from '../errors.js';
import { apiClient, type ApiClient, type ServerOptions } from '../io/api.js';
import { writeFileAtomic, writeOutput } from '../io/output.js';
import { readManifest } from '../io/read-manifest.js';
import { readResult } from '../io/read-result.js';
import { csv, json, table } from '../render.js';
import type { BatchReply, BatchTask } from './batch-worker.js';
import type { PushOptions } from './review.js';

export interface BatchOptions extends ServerOptions {
  jobs?: number;
  out?: string;
  force?: boolean;
  push?: boolean;
  shard?: { index: number; count: number };
  quiet?: boolean;
}

/** One job after glob expansion: what runs, and where its result goes. */
export interface PlannedJob {
  /** the result's stem: the job's name, or the input's base name */
  job: string;
  analysis: BatchAnalysis;
  file: string;
  options: Record<string, unknown>;
  optionFiles: string[];
  /** the result's file name inside OUT */
  outName: string;
}

const stemOf = (file: string) => {
  const base = path.basename(file);
  const dot = base.lastIndexOf('.');
  return dot > 0 ? base.slice(0, dot) : base;
};

/** Expand globs (sorted), resolve paths against the manifest's folder, name every result. */
export async function planJobs(manifestFile: string, m: BatchManifest): Promise<PlannedJob[]> {
  const { globSync, isDynamicPattern } = await import('tinyglobby');
  const base = path.dirname(path.resolve(manifestFile));
  const planned: (PlannedJob & { where: string })[] = [];
  m.jobs.forEach((j, i) => {
    const where = `jobs[${i}]`;
    const options: Record<string, unknown> = { ...j.options };
    const optionFiles: string[] = [];
    for (const key of PATH_OPTIONS) {
      const v = options[key];
      if (typeof v === 'string') {
        options[key] = path.resolve(base, v);
        optionFiles.push(options[key] as string);
      }
    }
    let files: string[];
    if (isDynamicPattern(j.input)) {
      files = globSync(j.input, { cwd: base, absolute: true, onlyFiles: true })
        .map((f) => path.resolve(f))
        .sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
      if (!files.length)
        throw usageError(`${manifestFile}: ${where}.input: "${j.input}" matches no file`);
    } else files = [path.resolve(base, j.input)];
    for (const file of files) {
      const job =
        j.name === undefined
          ? stemOf(file)
          : files.length > 1 || isDynamicPattern(j.input)
            ? `${j.name}-${stemOf(file)}`
            : j.name;
      planned.push({
        where,
        job,
        analysis: j.analysis,
        file,
        options,
        optionFiles,
        outName: `${job}.${j.analysis}.json`,
      });
    }
  });
  const seen = new Map<string, string>();
  for (const p of planned) {
    const other = seen.get(p.outName);
    if (other)
      throw usageError(
        `${manifestFile}: ${p.where}.name: ${other} and ${p.where} both write ${p.outName}; give the jobs distinct names`,
      );
    seen.set(p.outName, p.where);
  }
  return planned.map(({ where: _where, ...p }) => p);
}

/** The shard's jobs: index mod N == I − 1, over the expanded, sorted list. */
export const shardOf = <T>(jobs: T[], shard?: { index: number; count: number }): T[] =>
  shard ? jobs.filter((_, i) => i % shard.count === shard.index - 1) : jobs;

function workerFile(): string {
  const file = distDir('cli', 'batch-worker.js');
  if (!existsSync(file))
    throw ioFailure(`the batch worker is not built (no ${file}): run \`node cli/build.mjs\``);
  return file;
}

const PUSH_TRIES = 3;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** POST the result as a run; network trouble and server faults are retried with back-off. */
async function pushWithRetry(api: ApiClient, resultFile: string): Promise<string> {
  const result = await readResult(resultFile);
  for (let attempt = 1; ; attempt++) {
    try {
      const run = await api.request<{ id: string }>('POST', '/api/runs', { result });
      return run.id;
    } catch (e) {
      const retriable = e instanceof CliError && e.exitCode === EXIT.io;
      if (!retriable || attempt >= PUSH_TRIES) throw e;
      await sleep(500 * 2 ** (attempt - 1));
    }
  }
}

/** A bar on stderr, only on a terminal: done/failed counts. */
async function progress(total: number, quiet?: boolean) {
  // a terminal of no width (some pseudo-terminals) would make the spinner redraw forever
  if (quiet || !process.stderr.isTTY || !(process.stderr.columns > 0))
    return { update: () => undefined, stop: () => undefined };
  const { default: ora } = await import('ora');
  const spinner = ora({ text: `batch: 0/${total}`, stream: process.stderr }).start();
  return {
    update: (c: Record<BatchLine['status'], number>) => {
      const n = c.done + c.skipped + c.failed;
      const width = 20;
      const full = Math.round((width * n) / Math.max(1, total));
      spinner.text = `[${'█'.repeat(full)}${'░'.repeat(width - full)}] ${n}/${total} · ${c.done} done · ${c.skipped} skipped · ${c.failed} failed`;
    },
    stop: () => spinner.stop(),
  };
}

export async function runBatch(manifestFile: string, o: BatchOptions): Promise<void> {
  const manifest = readManifest(manifestFile);
  const all = await planJobs(manifestFile, manifest);
  const jobs = shardOf(all, o.shard);
  // server and token are checked before any work
  const api = o.push ? apiClient(o) : undefined;
  const outDir = o.out
    ? path.resolve(o.out)
    : path.resolve(path.dirname(path.resolve(manifestFile)), manifest.out ?? 'results');
  try {
    mkdirSync(path.join(outDir, '.batch'), { recursive: true });
  } catch (e) {
    throw ioFailure(`${outDir}: cannot make the output folder (${(e as Error).message})`);
  }
  const threads = Math.max(1, Math.min(o.jobs ?? availableParallelism(), jobs.length || 1));
  const counts = { done: 0, skipped: 0, failed: 0 };
  const failures: BatchLine[] = [];
  let pending = 0;
  let notPushable = 0;
  const bar = await progress(jobs.length, o.quiet);
  const { Piscina } = await import('piscina');
  const pool = new Piscina({ filename: workerFile(), minThreads: 1, maxThreads: threads });
  // results named as the user would type them: relative to here when below it, else absolute
  const relOut = (name: string) => {
    const full = path.join(outDir, name);
    const rel = path.relative(process.cwd(), full);
    return rel && !rel.startsWith('..') && !path.isAbsolute(rel) ? rel : full;
  };

  const one = async (j: PlannedJob): Promise<void> => {
    const started = performance.now();
    const outFile = path.join(outDir, j.outName);
    const task: BatchTask = {
      analysis: j.analysis,
      file: j.file,
      options: j.options,
      optionFiles: j.optionFiles,
      outFile,
      sidecarFile: path.join(outDir, '.batch', j.outName),
      force: o.force === true,
    };
    let reply: BatchReply;
    try {
      reply = (await pool.run(task)) as BatchReply;
    } catch (e) {
      reply = { status: 'failed', error: `the batch worker failed: ${String(e)}`, wrote: false };
    }
    const line: BatchLine = {
      job: j.job,
      analysis: j.analysis,
      input: j.file,
      status: reply.status,
      ...(reply.status !== 'failed' || reply.wrote ? { out: relOut(j.outName) } : {}),
      ...(reply.status === 'failed' ? { error: reply.error } : {}),
      seconds: 0,
    };
    if (api && reply.status === 'done') {
      if (!(COMPARABLE_KINDS as readonly string[]).includes(j.analysis)) notPushable++;
      else {
        try {
          line.run_id = await pushWithRetry(api, outFile);
        } catch (e) {
          pending++;
          line.pending = true;
          const marker: PendingPush = {
            schema: 'sightline/pending-push@1',
            result: j.outName,
            error: classify(e).message,
          };
          mkdirSync(path.join(outDir, '.pending'), { recursive: true });
          await writeFileAtomic(path.join(outDir, '.pending', j.outName), json(marker));
        }
      }
    }
    line.seconds = Number(((performance.now() - started) / 1000).toFixed(3));
    counts[line.status]++;
    if (line.status === 'failed') failures.push(line);
    process.stdout.write(JSON.stringify(line) + '\n');
    bar.update(counts);
  };

  try {
    await Promise.all(jobs.map(one));
  } finally {
    bar.stop();
    await pool.close();
  }
  const shard = o.shard ? ` (shard ${o.shard.index}/${o.shard.count} of ${all.length})` : '';
  let summary = `batch: ${jobs.length} job(s)${shard} · ${counts.done} done · ${counts.skipped} skipped · ${counts.failed} failed · results in ${relOut('')}`;
  if (api) {
    summary += `\npush: ${counts.done - pending - notPushable} pushed · ${pending} pending`;
    if (pending)
      summary += ` (markers in ${relOut('.pending')}; send them later with \`sightline runs push --pending ${relOut('')}\`)`;
    if (notPushable) summary += ` · ${notPushable} dm-refine result(s) are not runs and stay local`;
  }
  if (failures.length) {
    summary += '\nfailed:';
    for (const f of failures) summary += `\n  ${f.job} (${f.analysis}, ${f.input}): ${f.error}`;
  }
  process.stderr.write(summary + '\n');
  if (failures.length) throw checkFailed(`${failures.length} of ${jobs.length} job(s) failed`);
}

/** `sightline runs push --pending DIR`: send every result a batch could not push; drop each marker once accepted. */
export async function runPushPending(dir: string, o: PushOptions): Promise<void> {
  const api = apiClient(o);
  const pendingDir = path.join(dir, '.pending');
  let names: string[] = [];
  try {
    if (statSync(pendingDir).isDirectory())
      names = readdirSync(pendingDir)
        .filter((n) => n.endsWith('.json') && !n.startsWith('.'))
        .sort();
  } catch {
    names = [];
  }
  const pushed: {
    file: string;
    id: string;
    url: string;
    state: string;
    pulsar: string;
    kind: string;
  }[] = [];
  const failed: { marker: string; code: number; message: string }[] = [];
  for (const name of names) {
    const markerFile = path.join(pendingDir, name);
    try {
      let marker: PendingPush;
      try {
        marker = pendingPushSchema.parse(JSON.parse(readFileSync(markerFile, 'utf8')));
      } catch (e) {
        throw usageError(
          `${markerFile}: not a pending-push marker (${(e as Error).message.split('\n')[0]})`,
        );
      }
      const resultFile = path.resolve(dir, marker.result);
      const result = await readResult(resultFile);
      const run = await api.request<{
        id: string;
        url: string;
        state: string;
        pulsar: string;
        kind: string;
      }>('POST', '/api/runs', {
        result,
        submit: o.submit === true,
        ...(o.title ? { title: o.title } : {}),
      });
      rmSync(markerFile, { force: true });
      pushed.push({
        file: resultFile,
        id: run.id,
        url: run.url,
        state: run.state,
        pulsar: run.pulsar,
        kind: run.kind,
      });
      note(o, `pushed ${resultFile} → run ${run.id} (${run.state})`);
    } catch (e) {
      const { code, message } = classify(e);
      failed.push({ marker: markerFile, code, message });
      process.stderr.write(`sightline: ${message}\n`);
    }
  }
  if (!names.length) note(o, `nothing pending in ${pendingDir}`);
  const format = formatOf(o as CommonOptions);
  const rows = pushed.map((p) => [p.file, p.id, p.pulsar, p.kind, p.state, p.url]);
  await writeOutput(
    o.out,
    format === 'json'
      ? json({ schema: 'sightline/push@1', server: api.base, runs: pushed })
      : format === 'csv'
        ? csv(['file', 'run_id', 'pulsar', 'kind', 'state', 'url'], rows)
        : table(['file', 'run', 'pulsar', 'kind', 'state', 'url'], rows),
  );
  if (failed.length) {
    const code = failed.some((f) => f.code === EXIT.io) ? EXIT.io : failed[0].code;
    throw new CliError(
      `${failed.length} of ${names.length} pending result(s) not sent; their markers stay in ${pendingDir}`,
      code,
    );
  }
}
