import type { BaselineCheckResponse } from '../../shared/schemas/review.js';
import { formatOf, note, type CommonOptions } from '../common.js';
import { checkFailed } from '../errors.js';
import { apiClient, type ServerOptions } from '../io/api.js';
import { baselineCheckToJunit } from '../io/junit.js';
import { openOutput, writeFileAtomic } from '../io/output.js';
import { readResults } from '../io/read-result.js';
import { csv, fmt, json, table } from '../render.js';

export interface PushOptions extends CommonOptions, ServerOptions {
  submit?: boolean;
  title?: string;
}

interface PushedRun {
  id: string;
  url: string;
  state: string;
  kind: string;
  pulsar: string;
  version: number;
}

async function emit(o: CommonOptions, text: string): Promise<void> {
  const out = openOutput(o.out);
  try {
    await out.write(text);
    await out.commit();
  } catch (e) {
    out.abort();
    throw e;
  }
}

/** `sightline runs push`: every file is checked first; then one run per file. */
export async function runPush(files: string[], o: PushOptions): Promise<void> {
  const api = apiClient(o);
  const results = await readResults(files);
  const pushed: (PushedRun & { file: string })[] = [];
  try {
    for (const { path, result } of results) {
      const run = await api.request<PushedRun>('POST', '/api/runs', {
        result,
        submit: o.submit === true,
        ...(o.title ? { title: o.title } : {}),
      });
      pushed.push({ file: path, ...run });
      note(o, `pushed ${path} → run ${run.id} (${run.state})`);
    }
  } catch (e) {
    if (pushed.length)
      process.stderr.write(
        `sightline: ${pushed.length} of ${results.length} file(s) were pushed before the failure: ${pushed.map((p) => p.id).join(', ')}\n`,
      );
    throw e;
  }
  const format = formatOf(o);
  const rows = pushed.map((p) => [p.file, p.id, p.pulsar, p.kind, p.state, p.url]);
  const head = ['file', 'run_id', 'pulsar', 'kind', 'state', 'url'];
  await emit(
    o,
    format === 'json'
      ? json({ schema: 'sightline/push@1', server: api.base, runs: pushed })
      : format === 'csv'
        ? csv(head, rows)
        : table(['file', 'run', 'pulsar', 'kind', 'state', 'url'], rows),
  );
}

export interface BaselineCheckOptions extends CommonOptions, ServerOptions {
  toleranceSigma: number;
  junit?: string;
  requireBaseline?: boolean;
}

/** `sightline baseline check`: exit 1 on any regression (and with --require-baseline, on none). */
export async function runBaselineCheck(files: string[], o: BaselineCheckOptions): Promise<void> {
  const api = apiClient(o);
  const results = await readResults(files);
  const check = await api.request<BaselineCheckResponse>('POST', '/api/baselines/check', {
    tolerance_sigma: o.toleranceSigma,
    results: results.map((r) => r.result),
  });
  if (o.junit) await writeFileAtomic(o.junit, baselineCheckToJunit(check));
  const format = formatOf(o);
  const worst = (items: BaselineCheckResponse['results'][number]['items']) =>
    items.reduce<number | null>(
      (m, i) =>
        i.deviation_sigma === null || i.deviation_sigma === undefined
          ? m
          : Math.max(m ?? 0, Math.abs(i.deviation_sigma)),
      null,
    );
  if (format === 'json') await emit(o, json(check));
  else {
    const head = ['source', 'kind', 'status', 'failed', 'worst |dev| (σ)', 'baseline run'];
    const rows = check.results.map((r) => [
      r.source,
      r.kind,
      r.status,
      r.n_failed,
      worst(r.items),
      r.baseline_run_id,
    ]);
    if (format === 'csv') await emit(o, csv(head, rows));
    else {
      let text = `tolerance ${check.tolerance_sigma}σ · ${check.pass ? 'PASS' : 'FAIL'}\n`;
      text += table(head, rows, [3, 4]);
      const failed = check.results.flatMap((r) =>
        r.items.filter((i) => !i.pass).map((i) => ({ r, i })),
      );
      if (failed.length) {
        text += '\nregressions:\n';
        for (const { r, i } of failed.slice(0, 50))
          text += `  ${r.source} ${r.kind} ${i.key} ${i.quantity}: ${i.reason ?? ''}${i.deviation_sigma !== null && i.deviation_sigma !== undefined ? ` ${fmt(i.baseline)} → ${fmt(i.value)} (${fmt(i.deviation_sigma, 3)}σ)` : ''}\n`;
        if (failed.length > 50) text += `  … ${failed.length - 50} more (see --json)\n`;
      }
      await emit(o, text);
    }
  }
  const missing = check.results.filter((r) => r.status === 'no_baseline');
  if (missing.length)
    note(o, `no approved baseline for: ${missing.map((m) => `${m.source} ${m.kind}`).join(', ')}`);
  if (!check.pass) {
    const n = check.results.filter((r) => r.status === 'fail').length;
    throw checkFailed(`${n} result(s) moved beyond ${check.tolerance_sigma}σ of their baseline`);
  }
  if (o.requireBaseline && missing.length)
    throw checkFailed(`${missing.length} result(s) have no approved baseline (--require-baseline)`);
}
