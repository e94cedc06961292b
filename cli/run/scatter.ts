import { analyseScattering } from '../../shared/profiles/analyse.js';
import type { ScatterModelName } from '../../shared/profiles/scatter-fit.js';
import type { ScatterFitResult } from '../../shared/schemas/scatter-fit.js';
import { CAUTION, formatOf, note, SOFTWARE, withProgress, type CommonOptions } from '../common.js';
import { checkFailed, usageError } from '../errors.js';
import { readProfiles } from '../io/read-profiles.js';
import { writeFileAtomic, writeOutput } from '../io/output.js';
import { bandRows } from '../../shared/review/rows.js';
import { csv, fmt, jsonChunks, table } from '../render.js';

export interface ScatterCliOptions extends CommonOptions {
  model: ScatterModelName;
  template?: string;
  meta?: string;
  alpha: number | 'free';
  refFreq: number;
  dm?: number;
  plot?: string;
  /** what results and errors call FILE (default FILE; the server passes the upload's name) */
  inputName?: string;
}

export async function runScatter(file: string, o: ScatterCliOptions): Promise<ScatterFitResult> {
  if (o.model === 'template' && !o.template)
    throw usageError('--model template needs --template FILE');
  if (o.template && o.model !== 'template')
    throw usageError('--template goes with --model template');
  const name = o.inputName ?? file;
  const { set, input } = await readProfiles(file, o.meta, name);
  let template: Float64Array | undefined;
  if (o.template) {
    const t = await readProfiles(o.template);
    const band = t.set.bands.reduce((a, b) => (b.freqMhz > a.freqMhz ? b : a));
    if (band.bins.length !== set.bands[0].bins.length) {
      throw usageError(
        `the template has ${band.bins.length} bins per rotation, the profiles ${set.bands[0].bins.length}`,
      );
    }
    template = band.bins;
    input.push(...t.input);
  }
  const body = await withProgress(o, `fitting ${set.bands.length} bands`, async () => {
    try {
      return analyseScattering(set, {
        model: o.model,
        template,
        alpha: o.alpha === 'free' ? undefined : o.alpha,
        refFreqMhz: o.refFreq,
        dm: o.dm,
      });
    } catch (e) {
      if (e instanceof RangeError) throw usageError(`${name}: ${e.message}`);
      throw e;
    }
  });
  const result: ScatterFitResult = {
    schema: 'sightline/scatter-fit@1',
    software: SOFTWARE,
    created_utc: new Date().toISOString(),
    parameters: {
      model: o.model,
      alpha: o.alpha,
      ref_freq_mhz: o.refFreq,
      template: o.template ?? null,
    },
    input,
    cautions: [CAUTION],
    ...body,
  };
  return result;
}

function render(r: ScatterFitResult, format: string): string | Iterable<string> {
  if (format === 'json') return jsonChunks(r);
  if (format === 'csv') {
    const { head, rows } = bandRows(r);
    return csv(head, rows);
  }
  let text = `${r.source} · MJD ${r.mjd} · P = ${fmt(r.period_s * 1e3)} ms · ${r.nbin} bins · model ${r.model}\n`;
  text += table(
    ['freq (MHz)', 'status', 'τ (µs)', 'σ_τ (µs)', 'χ²_red', 'S/N'],
    r.bands.map((b) => [
      b.freq_mhz,
      b.status === 'upper_limit' ? `< ${fmt(b.tau_upper_us, 3)}` : b.status,
      b.status === 'upper_limit' ? null : fmt(b.tau_us, 4),
      b.tau_err_us === null ? null : fmt(b.tau_err_us, 2),
      b.reduced_chi2 === null ? null : b.reduced_chi2.toFixed(2),
      fmt(b.snr, 3),
    ]),
    [0, 2, 3, 4, 5],
  );
  const pl = r.power_law;
  if (pl) {
    text += `power law: τ(${pl.ref_freq_mhz} MHz) = ${fmt(pl.tau_ref_us, 4)} ± ${fmt(pl.tau_ref_err_us, 2)} µs, α = ${pl.alpha.toFixed(3)}${pl.alpha_err === null ? ' (fixed)' : ` ± ${pl.alpha_err.toFixed(3)}`} from ${pl.n_bands} band(s)\n`;
  }
  if (r.expected) {
    text += `expected from the τ–DM relation (${r.expected.relation}, DM ${fmt(r.expected.dm)}): ${fmt(r.expected.tau_us, 3)} µs at ${r.expected.freq_mhz} MHz, scatter ${r.expected.scatter_dex} dex\n`;
  }
  const warned = [
    ...r.warnings,
    ...r.bands.flatMap((b) => b.warnings.map((w) => `${b.freq_mhz} MHz: ${w}`)),
  ];
  if (warned.length) text += `\nwarnings:\n${warned.map((w) => `  ${w}`).join('\n')}\n`;
  return text;
}

export async function runScatterFit(file: string, o: ScatterCliOptions): Promise<void> {
  const r = await runScatter(file, o);
  if (o.plot) {
    const { drawScatterPlot } = await import('../plot/scatter-plot.js');
    const { set } = await readProfiles(file, o.meta);
    let template: Float64Array | undefined;
    if (o.template) {
      const t = await readProfiles(o.template);
      template = t.set.bands.reduce((a, b) => (b.freqMhz > a.freqMhz ? b : a)).bins;
    }
    await writeFileAtomic(o.plot, drawScatterPlot(r, set, template));
  }
  await writeOutput(o.out, render(r, formatOf(o)));
  const nWarnings = r.warnings.length + r.bands.reduce((n, b) => n + b.warnings.length, 0);
  if (nWarnings) note(o, `${nWarnings} warning(s); ${CAUTION}`);
  if (r.bands.every((b) => b.status === 'failed')) throw checkFailed('no band could be fitted');
  if (!r.power_law)
    throw checkFailed(
      'no τ(ν) power law: fewer than two bands with a measured τ (see the warnings)',
    );
}
