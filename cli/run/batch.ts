// `sightline batch MANIFEST`: many analyses on a worker pool (piscina; the worker is
// cli/run/batch-worker.ts, bundled to dist/cli/batch-worker.js), resumable, one JSON line per
// finished job on stdout; and `sightline runs push --pending DIR`.
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import {
  PATH_OPTIONS,
  PATH_PLACEHOLDERS,
  pendingPushSchema,
  pushedRecordSchema,
  type BatchAnalysis,
  type BatchLine,
  type BatchManifest,
  type PendingPush,
  type PushedRecord,
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
  /** indexes (in the planned list) of the jobs whose results this job reads: they run first */
  needs: number[];
}

const stemOf = (file: string) => {
  const base = path.basename(file);
  const dot = base.lastIndexOf('.');
  return dot > 0 ? base.slice(0, dot) : base;
};

/** The results folder: --out, else the manifest's out (default results/) beside the manifest. */
export function outDirOf(manifestFile: string, m: BatchManifest, out?: string): string {
  return out
    ? path.resolve(out)
    : path.resolve(path.dirname(path.resolve(manifestFile)), m.out ?? 'results');
}

/** The result's file name: JSON results, or the corrected table in the input's own layout. */
const outNameOf = (job: string, analysis: BatchAnalysis, file: string) =>
  analysis === 'toas-correct'
    ? `${job}.${analysis}${path.extname(file)}`
    : `${job}.${analysis}.json`;

/**
 * Expand globs (sorted, less `exclude`), fill the placeholders of file options and resolve them
 * against the manifest's folder, name every result, and find which jobs read another's result.
 */
export async function planJobs(
  manifestFile: string,
  m: BatchManifest,
  outDir: string,
): Promise<PlannedJob[]> {
  const { globSync, isDynamicPattern } = await import('tinyglobby');
  const base = path.dirname(path.resolve(manifestFile));
  const sorted = (files: string[]) =>
    files.map((f) => path.resolve(f)).sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  const planned: (PlannedJob & { where: string })[] = [];
  m.jobs.forEach((j, i) => {
    const where = `jobs[${i}]`;
    const fail = (field: string, message: string) =>
      usageError(`${manifestFile}: ${where}.${field}: ${message}`);
    let files: string[];
    const excludes = j.exclude === undefined ? [] : [j.exclude].flat();
    if (isDynamicPattern(j.input)) {
      files = sorted(globSync(j.input, { cwd: base, absolute: true, onlyFiles: true }));
      if (!files.length) throw fail('input', `"${j.input}" matches no file`);
      const inInput = new Set(files);
      const dropped = new Set<string>();
      excludes.forEach((pattern, k) => {
        const field = Array.isArray(j.exclude) ? `exclude[${k}]` : 'exclude';
        const hits = isDynamicPattern(pattern)
          ? sorted(globSync(pattern, { cwd: base, absolute: true, onlyFiles: true }))
          : [path.resolve(base, pattern)];
        const mine = hits.filter((f) => inInput.has(f));
        // a typo must not silently keep the files it meant to leave out
        if (!mine.length) throw fail(field, `"${pattern}" matches none of the input's files`);
        for (const f of mine) dropped.add(f);
      });
      files = files.filter((f) => !dropped.has(f));
      if (!files.length) throw fail('exclude', `leaves none of the files of "${j.input}"`);
    } else {
      if (excludes.length) throw fail('exclude', 'goes with a glob input only');
      files = [path.resolve(base, j.input)];
    }
    for (const file of files) {
      const stem = stemOf(file);
      const options: Record<string, unknown> = { ...j.options };
      const optionFiles: string[] = [];
      for (const key of PATH_OPTIONS) {
        const v = options[key];
        if (typeof v !== 'string') continue;
        const filled = v.replace(/\{([A-Za-z_]+)\}/g, (whole, name: string) => {
          if (name === 'out') return outDir;
          if (name === 'stem') return stem;
          throw fail(
            `options.${key}`,
            `unknown placeholder ${whole} (known: ${PATH_PLACEHOLDERS.map((p) => `{${p}}`).join(', ')})`,
          );
        });
        options[key] = path.resolve(base, filled);
        optionFiles.push(options[key] as string);
      }
      const job =
        j.name === undefined
          ? stem
          : files.length > 1 || isDynamicPattern(j.input)
            ? `${j.name}-${stem}`
            : j.name;
      planned.push({
        where,
        job,
        analysis: j.analysis,
        file,
        options,
        optionFiles,
        outName: outNameOf(job, j.analysis, file),
        needs: [],
      });
    }
  });
  const byOut = new Map<string, number>();
  planned.forEach((p, k) => {
    const other = byOut.get(p.outName);
    if (other !== undefined)
      throw usageError(
        `${manifestFile}: ${p.where}.name: ${planned[other].where} and ${p.where} both write ${p.outName}; give the jobs distinct names`,
      );
    byOut.set(p.outName, k);
  });
  // a job whose input or file option is another job's result runs after it
  planned.forEach((p) => {
    for (const f of [p.file, ...p.optionFiles]) {
      if (path.dirname(f) !== outDir) continue;
      const k = byOut.get(path.basename(f));
      if (k !== undefined && !p.needs.includes(k)) p.needs.push(k);
    }
  });
  checkNoCycle(manifestFile, planned);
  return planned.map(({ where: _where, ...p }) => p);
}

/** A job may not wait, however indirectly, for itself. */
function checkNoCycle(manifestFile: string, planned: (PlannedJob & { where: string })[]): void {
  const state = new Uint8Array(planned.length); // 0 new, 1 on the path, 2 finished
  for (let root = 0; root < planned.length; root++) {
    if (state[root]) continue;
    // iterative depth-first search: a 10⁵-job chain must not overflow the stack
    const stack: [number, number][] = [[root, 0]];
    state[root] = 1;
    while (stack.length) {
      const top = stack[stack.length - 1];
      const [k, next] = top;
      if (next < planned[k].needs.length) {
        top[1]++;
        const d = planned[k].needs[next];
        if (state[d] === 1) {
          const p = planned[k];
          throw usageError(
            `${manifestFile}: ${p.where}: ${p.outName} ${d === k ? 'reads its own result' : `waits for ${planned[d].outName} (${planned[d].where}), which waits for it`}; a job cannot read a result made after it`,
          );
        }
        if (state[d] === 0) {
          state[d] = 1;
          stack.push([d, 0]);
        }
      } else {
        state[k] = 2;
        stack.pop();
      }
    }
  }
}

/**
 * The shard's jobs: index mod N == I − 1, over the expanded, sorted list; jobs that read each
 * other's results go together, to the shard of the first of them.
 */
export function shardOf<T extends { needs: number[] }>(
  jobs: T[],
  shard?: { index: number; count: number },
): number[] {
  const all = jobs.map((_, k) => k);
  if (!shard) return all;
  // union-find over the dependencies; every group's root is its lowest index
  const parent = Int32Array.from(all);
  const find = (k: number): number => {
    while (parent[k] !== k) {
      parent[k] = parent[parent[k]];
      k = parent[k];
    }
    return k;
  };
  jobs.forEach((j, k) => {
    for (const d of j.needs) {
      const a = find(k);
      const b = find(d);
      if (a !== b) parent[Math.max(a, b)] = Math.min(a, b);
    }
  });
  return all.filter((k) => find(k) % shard.count === shard.index - 1);
}

function workerFile(): string {
  const file = distDir('cli', 'batch-worker.js');
  if (!existsSync(file))
    throw ioFailure(`the batch worker is not built (no ${file}): run \`node cli/build.mjs\``);
  return file;
}

const PUSH_TRIES = 3;
/** pushes in flight at once: enough to overlap the round trips, few enough not to swamp a server */
const PUSH_CONCURRENCY = 4;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** POST the result as a run; network trouble and server faults are retried with back-off. */
async function pushWithRetry(api: ApiClient, resultFile: string, tries: number): Promise<string> {
  const result = await readResult(resultFile);
  for (let attempt = 1; ; attempt++) {
    try {
      const run = await api.request<{ id: string }>('POST', '/api/runs', { result });
      return run.id;
    } catch (e) {
      const retriable = e instanceof CliError && e.exitCode === EXIT.io;
      if (!retriable || attempt >= tries) throw e;
      await sleep(500 * 2 ** (attempt - 1));
    }
  }
}

/** At most `n` at a time. */
function limiter(n: number) {
  let active = 0;
  const waiting: (() => void)[] = [];
  return async <T>(work: () => Promise<T>): Promise<T> => {
    if (active >= n) await new Promise<void>((r) => waiting.push(r));
    active++;
    try {
      return await work();
    } finally {
      active--;
      waiting.shift()?.();
    }
  };
}

const sha256File = (file: string) => createHash('sha256').update(readFileSync(file)).digest('hex');

function readPushed(file: string): PushedRecord | undefined {
  try {
    return pushedRecordSchema.parse(JSON.parse(readFileSync(file, 'utf8')));
  } catch {
    return undefined;
  }
}

/** Remember that this result (by its SHA-256) is run `runId` on `server`; one entry per server. */
async function recordPush(
  outDir: string,
  name: string,
  server: string,
  runId: string,
  resultSha256: string,
): Promise<void> {
  const dir = path.join(outDir, '.pushed');
  mkdirSync(dir, { recursive: true });
  const file = path.join(dir, name);
  const earlier = readPushed(file)?.runs.filter((r) => r.server !== server) ?? [];
  const record: PushedRecord = {
    schema: 'sightline/pushed@1',
    result: name,
    runs: [...earlier, { server, run_id: runId, result_sha256: resultSha256 }],
  };
  await writeFileAtomic(file, json(record));
}

/** The run an earlier push of this very result made on this server, if any. */
const pushedBefore = (outDir: string, name: string, server: string, resultSha256: string) =>
  readPushed(path.join(outDir, '.pushed', name))?.runs.find(
    (r) => r.server === server && r.result_sha256 === resultSha256,
  )?.run_id;

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
  const outDir = outDirOf(manifestFile, manifest, o.out);
  const all = await planJobs(manifestFile, manifest, outDir);
  const chosen = shardOf(all, o.shard);
  // server and token are checked before any work
  const api = o.push ? apiClient(o) : undefined;
  try {
    mkdirSync(path.join(outDir, '.batch'), { recursive: true });
  } catch (e) {
    throw ioFailure(`${outDir}: cannot make the output folder (${(e as Error).message})`);
  }
  const threads = Math.max(1, Math.min(o.jobs ?? availableParallelism(), chosen.length || 1));
  const counts = { done: 0, skipped: 0, failed: 0 };
  const failures: BatchLine[] = [];
  const push = {
    sent: 0,
    before: 0,
    pending: 0,
    refused: [] as string[],
    unrecorded: [] as string[],
    local: 0,
    /** markers of jobs that failed now: what they would send is no longer a good result */
    dropped: 0,
  };
  // after a push has failed every try for network trouble, the next ones try once: a server
  // that is down costs one round of back-off, not one per result
  let serverDown = false;
  const pushSlot = limiter(PUSH_CONCURRENCY);
  const bar = await progress(chosen.length, o.quiet);
  const { Piscina } = await import('piscina');
  const pool = new Piscina({ filename: workerFile(), minThreads: 1, maxThreads: threads });
  // results named as the user would type them: relative to here when below it, else absolute
  const relOut = (name: string) => {
    const full = path.join(outDir, name);
    const rel = path.relative(process.cwd(), full);
    return rel && !rel.startsWith('..') && !path.isAbsolute(rel) ? rel : full;
  };

  // each job's work, once: a job that reads another's result starts when that one has finished
  const replies = new Map<number, Promise<BatchReply>>();
  const work = (k: number): Promise<BatchReply> => {
    let reply = replies.get(k);
    if (!reply) {
      reply = (async (): Promise<BatchReply> => {
        const j = all[k];
        for (const d of j.needs) {
          const before = await work(d);
          if (before.status === 'failed')
            return {
              status: 'failed',
              error: `not run: it reads ${all[d].outName}, and job ${all[d].job} (${all[d].analysis}) failed`,
              wrote: false,
              seconds: 0,
            };
        }
        const task: BatchTask = {
          analysis: j.analysis,
          file: j.file,
          options: j.options,
          optionFiles: j.optionFiles,
          outFile: path.join(outDir, j.outName),
          sidecarFile: path.join(outDir, '.batch', j.outName),
          force: o.force === true,
        };
        try {
          return (await pool.run(task)) as BatchReply;
        } catch (e) {
          return {
            status: 'failed',
            error: `the batch worker failed: ${String(e)}`,
            wrote: false,
            seconds: 0,
          };
        }
      })();
      replies.set(k, reply);
    }
    return reply;
  };

  /** Send a finished result unless this server has it already; a failure leaves a marker. */
  const pushResult = async (j: PlannedJob, sha: string, line: BatchLine): Promise<void> => {
    if (!api) return;
    if (!(COMPARABLE_KINDS as readonly string[]).includes(j.analysis)) {
      push.local++;
      return;
    }
    const markerFile = path.join(outDir, '.pending', j.outName);
    const earlier = pushedBefore(outDir, j.outName, api.base, sha);
    if (earlier) {
      line.run_id = earlier;
      line.already_pushed = true;
      push.before++;
      rmSync(markerFile, { force: true });
      return;
    }
    await pushSlot(async () => {
      const started = performance.now();
      let runId: string | undefined;
      try {
        runId = await pushWithRetry(api, path.join(outDir, j.outName), serverDown ? 1 : PUSH_TRIES);
      } catch (e) {
        const { code, message } = classify(e);
        if (code === EXIT.io) serverDown = true;
        else push.refused.push(`${j.outName}: ${message}`);
        push.pending++;
        line.pending = true;
        const marker: PendingPush = {
          schema: 'sightline/pending-push@1',
          result: j.outName,
          error: message,
          server: api.base,
        };
        mkdirSync(path.dirname(markerFile), { recursive: true });
        await writeFileAtomic(markerFile, json(marker));
      }
      if (runId !== undefined) {
        serverDown = false;
        push.sent++;
        line.run_id = runId;
        // the run exists now, whatever happens to the record: never a marker for it
        try {
          await recordPush(outDir, j.outName, api.base, runId, sha);
          rmSync(markerFile, { force: true });
        } catch (e) {
          push.unrecorded.push(`${j.outName}: ${classify(e).message}`);
        }
      }
      line.seconds += (performance.now() - started) / 1000;
    });
  };

  const one = async (k: number): Promise<void> => {
    const j = all[k];
    const reply = await work(k);
    const line: BatchLine = {
      job: j.job,
      analysis: j.analysis,
      input: j.file,
      status: reply.status,
      ...(reply.status !== 'failed' || reply.wrote ? { out: relOut(j.outName) } : {}),
      ...(reply.status === 'failed' ? { error: reply.error } : {}),
      seconds: reply.seconds,
    };
    if (reply.status !== 'failed') await pushResult(j, reply.result_sha256, line);
    else if (existsSync(path.join(outDir, '.pending', j.outName))) {
      // an earlier result waiting to be sent: the job has failed since, so the file on disk is a
      // failed result or one its inputs no longer match; it must not become a run later
      rmSync(path.join(outDir, '.pending', j.outName), { force: true });
      push.dropped++;
    }
    line.seconds = Number(line.seconds.toFixed(3));
    counts[line.status]++;
    if (line.status === 'failed') failures.push(line);
    process.stdout.write(JSON.stringify(line) + '\n');
    bar.update(counts);
  };

  try {
    await Promise.all(chosen.map(one));
  } finally {
    bar.stop();
    await pool.close();
  }
  const shard = o.shard ? ` (shard ${o.shard.index}/${o.shard.count} of ${all.length})` : '';
  let summary = `batch: ${chosen.length} job(s)${shard} · ${counts.done} done · ${counts.skipped} skipped · ${counts.failed} failed · results in ${relOut('')}`;
  if (api) {
    summary += `\npush: ${push.sent} pushed · ${push.pending} pending`;
    if (push.before) summary += ` · ${push.before} already on the server`;
    if (push.pending)
      summary += ` (markers in ${relOut('.pending')}; send them later with \`sightline runs push --pending ${relOut('')}\`)`;
    if (push.local)
      summary += ` · ${push.local} result(s) stay local (dm-refine and toas-correct make no runs)`;
    if (push.refused.length) {
      summary += `\nrefused by ${api.base}:`;
      for (const r of push.refused.slice(0, 5)) summary += `\n  ${r}`;
      if (push.refused.length > 5) summary += `\n  … and ${push.refused.length - 5} more`;
    }
    if (push.unrecorded.length) {
      summary += `\npushed, but not recorded in ${relOut('.pushed')} (a later --push sends them again):`;
      for (const r of push.unrecorded) summary += `\n  ${r}`;
    }
  }
  if (push.dropped)
    summary += `\npending: ${push.dropped} marker(s) dropped, their jobs failed this time`;
  if (failures.length) {
    summary += '\nfailed:';
    for (const f of failures) summary += `\n  ${f.job} (${f.analysis}, ${f.input}): ${f.error}`;
  }
  if (!o.quiet) process.stderr.write(summary + '\n');
  if (failures.length) throw checkFailed(`${failures.length} of ${chosen.length} job(s) failed`);
  // a server that answers but refuses (bad token, no push scope, a body it rejects) is not a
  // passing outage: the results wait in .pending, and the batch says so with exit 2
  if (push.refused.length)
    throw usageError(
      `${push.refused.length} push(es) refused by ${api?.base}; the results wait in ${relOut('.pending')}`,
    );
}

/**
 * `sightline runs push --pending DIR`: send every result a batch could not push; record the run
 * and drop each marker once accepted. A result this server already has (an earlier push of the
 * same file) is not sent again. Network trouble stops the round: the rest stay pending.
 */
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
  let already = 0;
  let unreachable = 0;
  for (const [at, name] of names.entries()) {
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
      const sha = sha256File(resultFile);
      const earlier = pushedBefore(dir, path.basename(marker.result), api.base, sha);
      if (earlier) {
        rmSync(markerFile, { force: true });
        already++;
        note(o, `${resultFile} is run ${earlier} on ${api.base} already; not sent again`);
        continue;
      }
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
      // the record first: a crash between the two must not lead to a second run
      await recordPush(dir, path.basename(marker.result), api.base, run.id, sha);
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
      if (code === EXIT.io) {
        // the server is out of reach: every other result would fail the same way
        unreachable = names.length - at - 1;
        break;
      }
    }
  }
  if (!names.length) note(o, `nothing pending in ${pendingDir}`);
  if (already) note(o, `${already} result(s) were on the server already; their markers are gone`);
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
      `${failed.length + unreachable} of ${names.length} pending result(s) not sent${unreachable ? ` (${unreachable} not tried: the server is out of reach)` : ''}; their markers stay in ${pendingDir}`,
      code,
    );
  }
}
