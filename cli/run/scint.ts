import { readFileSync } from 'node:fs';
import { InputError } from '../../shared/formats/errors.js';
import { analyseDynspec } from '../../shared/scint/analyse.js';
import type { DynSpec } from '../../shared/scint/dynspec.js';
import { scintBody } from '../../shared/scint/result.js';
import type { ScintResult } from '../../shared/schemas/scint.js';
import { scatterFitResultSchema } from '../../shared/schemas/scatter-fit.js';
import { rfiMemorySchema } from '../../shared/schemas/api.js';
import { parseMjd, toMjdNumber } from '../../shared/time/mjd.js';
import { CAUTION, formatOf, note, SOFTWARE, withProgress, type CommonOptions } from '../common.js';
import { checkFailed, ioFailure, usageError } from '../errors.js';
import { apiClient, type ApiClient, type ServerOptions } from '../io/api.js';
import { readDynspec } from '../io/read-dynspec.js';
import { writeFileAtomic, writeOutput } from '../io/output.js';
import { csv, fmt, jsonChunks, table } from '../render.js';
import { scintRows } from '../../shared/review/rows.js';

export interface ScintCliOptions extends CommonOptions, ServerOptions {
  meta?: string;
  /** start from the review server's remembered mask for the spectrum's receiver */
  maskFromServer?: boolean;
  rfiFence: number;
  pixelSigma: number;
  c1: number;
  mask?: string;
  tails?: string;
  secondary?: string;
  dynspec?: string;
  inputName?: string;
}

function readJson(path: string): unknown {
  const text = readFileSync(path, 'utf8');
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new InputError(`not valid JSON (${(e as Error).message})`, { file: path });
  }
}

/**
 * A starting mask: JSON `{ channels_mhz: [..] }` (what the review server remembers for a
 * receiver), or a scint result whose persistent channels are taken. Frequencies map to the
 * nearest channel within half a channel width.
 */
export function maskChannels(path: string, ds: DynSpec): number[] {
  const v = readJson(path) as {
    channels_mhz?: unknown;
    schema?: string;
    rfi?: { channels?: Array<{ freq_mhz: number; kind: string }> };
  };
  let freqs: unknown[];
  if (v?.schema === 'sightline/scint@1') {
    freqs = (v.rfi?.channels ?? []).filter((c) => c.kind === 'persistent').map((c) => c.freq_mhz);
  } else if (Array.isArray(v?.channels_mhz)) freqs = v.channels_mhz;
  else
    throw new InputError('a mask is { "channels_mhz": [..] } or a sightline/scint@1 result', {
      file: path,
    });
  freqs.forEach((f, i) => {
    if (typeof f !== 'number' || !Number.isFinite(f))
      throw new InputError('expected a frequency in MHz', {
        file: path,
        column: `channels_mhz[${i}]`,
      });
  });
  return channelsAt(freqs as number[], ds);
}

/** The channels of `ds` nearest to these frequencies, within half a channel width; others dropped. */
export function channelsAt(freqs: number[], ds: DynSpec): number[] {
  const out: number[] = [];
  for (const f of freqs) {
    const c = Math.round((f - ds.freqs[0]) / ds.dfMhz);
    if (c >= 0 && c < ds.nchan && Math.abs(ds.freqs[c] - f) <= ds.dfMhz / 2) out.push(c);
  }
  return [...new Set(out)];
}

/**
 * `--mask-from-server`: the interference channels the review server remembers for the
 * spectrum's receiver (GET /api/rfi/:receiver). Refused requests exit 2, network trouble 3.
 */
async function serverMask(
  api: ApiClient,
  ds: DynSpec,
  name: string,
  o: ScintCliOptions,
): Promise<{ receiver: string; channels: number[]; freqsMhz: number[] }> {
  const receiver = ds.receiver;
  if (!receiver)
    throw usageError(
      `${name}: --mask-from-server needs the dynamic spectrum's receiver, and its sidecar names none (add "receiver": "…")`,
    );
  const path = `/api/rfi/${encodeURIComponent(receiver)}`;
  const parsed = rfiMemorySchema.safeParse(await api.request<unknown>('GET', path));
  if (!parsed.success) {
    const i = parsed.error.issues[0];
    throw ioFailure(
      `GET ${path}: the server's answer is not an interference memory (${i.path.join('.') || '(top)'}: ${i.message})`,
    );
  }
  const memory = parsed.data;
  const channels = channelsAt(memory.channels_mhz, ds);
  const outside = memory.channels_mhz.length - channels.length;
  note(
    o,
    memory.channels_mhz.length
      ? `mask from ${api.base} for receiver ${receiver}: ${memory.channels_mhz.length} channel(s) remembered from ${memory.runs} scint run(s)${outside ? `, ${outside} outside this spectrum's channels` : ''}`
      : `the server remembers no interference channels for receiver ${receiver} yet (${memory.runs} scint run(s)); starting without a mask`,
  );
  return { receiver, channels, freqsMhz: channels.map((c) => ds.freqs[c]) };
}

/** τ from a profile scattering fit's power law, carried to `freqMhz`, with its error. */
function tauFromTails(path: string, r: ScintResult): NonNullable<ScintResult['tau_from_tails']> {
  const parsed = scatterFitResultSchema.safeParse(readJson(path));
  if (!parsed.success)
    throw new InputError(
      `not a sightline/scatter-fit@1 result: ${parsed.error.issues[0].message}`,
      {
        file: path,
        column: parsed.error.issues[0].path.join('.'),
      },
    );
  const s = parsed.data;
  const pl = s.power_law;
  if (!pl) throw new InputError('this scattering fit has no τ(ν) power law', { file: path });
  if (s.source !== r.source)
    r.warnings.push(
      `the scattering fit (--tails) is of ${s.source}, the dynamic spectrum of ${r.source}`,
    );
  if (r.mjd && Math.abs(toMjdNumber(parseMjd(s.mjd)) - toMjdNumber(parseMjd(r.mjd))) > 1)
    r.warnings.push(`the scattering fit (--tails) is from MJD ${s.mjd}, not the same visit`);
  const x = Math.log(r.ref_freq_mhz / pl.ref_freq_mhz);
  const tau = pl.tau_ref_us * Math.exp(-pl.alpha * x);
  const rel = Math.hypot(pl.tau_ref_err_us / pl.tau_ref_us, (pl.alpha_err ?? 0) * x);
  return { tau_us: tau, tau_err_us: tau * rel, freq_mhz: r.ref_freq_mhz, from: path };
}

export async function runScint(file: string, o: ScintCliOptions): Promise<ScintResult> {
  const name = o.inputName ?? file;
  if (o.mask && o.maskFromServer)
    throw usageError('--mask and --mask-from-server: give one starting mask, not both');
  // server and token are checked before any work
  const api = o.maskFromServer ? apiClient(o) : undefined;
  const { ds, input } = await readDynspec(file, o.meta, name);
  const fromServer = api ? await serverMask(api, ds, name, o) : undefined;
  const startMask = o.mask ? maskChannels(o.mask, ds) : fromServer?.channels;
  const a = await withProgress(o, `analysing ${ds.nchan} × ${ds.nsub} pixels`, async () =>
    analyseDynspec(ds, { fence: o.rfiFence, pixelSigma: o.pixelSigma, c1: o.c1, startMask }),
  );
  const r: ScintResult = {
    schema: 'sightline/scint@1',
    software: SOFTWARE,
    created_utc: new Date().toISOString(),
    parameters: {
      rfi_fence: o.rfiFence,
      pixel_sigma: o.pixelSigma,
      c1: o.c1,
      mask: fromServer ? `server:${fromServer.receiver}` : (o.mask ?? null),
      // what the server remembered when this ran: with `--mask` on { channels_mhz } it reproduces
      ...(fromServer ? { mask_channels_mhz: fromServer.freqsMhz } : {}),
      acf_models: {
        frequency: 'A/(1 + (δν/Δν_d)²) + c, Δν_d the half width at half maximum',
        time: 'A·exp(−(δt/Δt_d)²) + c, Δt_d the half width at 1/e',
      },
    },
    input,
    cautions: [CAUTION],
    ...scintBody(ds, a, { fence: o.rfiFence, pixelSigma: o.pixelSigma, c1: o.c1 }),
  };
  if (o.tails) r.tau_from_tails = tauFromTails(o.tails, r);
  return r;
}

function render(r: ScintResult, format: string): string | Iterable<string> {
  if (format === 'json') return jsonChunks(r);
  if (format === 'csv') {
    // the same columns as the review app's CSV export of a scint run
    const { head, rows } = scintRows(r);
    return csv(head, rows);
  }
  const pm = (v: number | null, e: number | null, d = 4) =>
    v === null ? '—' : `${fmt(v, d)} ± ${fmt(e, 2)}`;
  let text = `${r.source}${r.mjd ? ` · MJD ${r.mjd}` : ''}${r.receiver ? ` · ${r.receiver}` : ''} · ${r.nchan} channels × ${r.nsub} sub-integrations, ${fmt(r.freq_min_mhz)}–${fmt(r.freq_max_mhz)} MHz\n`;
  const kinds = ['persistent', 'intermittent', 'dead', 'given'].map(
    (k) => `${r.rfi.channels.filter((c) => c.kind === k).length} ${k}`,
  );
  text += `interference: ${(100 * r.rfi.flagged_fraction).toFixed(2)}% flagged — channels ${kinds.join(', ')}; ${r.rfi.subints_flagged.length} sub-integrations; ${r.rfi.pixels_flagged} pixels · S/N cost ${(100 * r.rfi.snr_cost_fraction).toFixed(1)}%\n`;
  text += table(
    ['quantity', 'value', 'note'],
    [
      [
        'Δν_d (MHz)',
        pm(r.dnu_d_mhz, r.dnu_d_err_mhz),
        'half width at half maximum of the frequency cut',
      ],
      ['Δt_d (s)', pm(r.dt_d_s, r.dt_d_err_s), 'half width at 1/e of the time cut'],
      [
        'scintles',
        r.n_scintles === null ? '—' : fmt(r.n_scintles, 3),
        'N_s, sets the finite-scintle error',
      ],
      [
        `τ (µs, ${fmt(r.ref_freq_mhz, 5)} MHz)`,
        r.status === 'unresolved' ? `> ${fmt(r.tau_lower_us, 3)}` : pm(r.tau_us, r.tau_err_us),
        `C₁/(2π Δν_d), C₁ = ${r.c1}`,
      ],
      ...(r.tau_from_tails
        ? [
            [
              'τ from tails (µs)',
              pm(r.tau_from_tails.tau_us, r.tau_from_tails.tau_err_us),
              'profile fit carried to the same frequency',
            ],
          ]
        : []),
      [
        'arc η (s³)',
        r.arc_curvature
          ? `${fmt(r.arc_curvature.eta_s3, 3)} (${fmt(r.arc_curvature.eta_lo_s3, 3)}–${fmt(r.arc_curvature.eta_hi_s3, 3)})`
          : '—',
        'f_τ = η f_t²',
      ],
    ],
  );
  if (r.warnings.length) text += `\nwarnings:\n${r.warnings.map((w) => `  ${w}`).join('\n')}\n`;
  return text;
}

export async function runScintAnalyse(file: string, o: ScintCliOptions): Promise<void> {
  const r = await runScint(file, o);
  if (o.dynspec || o.secondary) {
    const { drawDynspec, drawSecondary } = await import('../plot/scint-plot.js');
    if (o.dynspec) await writeFileAtomic(o.dynspec, drawDynspec(r));
    if (o.secondary) await writeFileAtomic(o.secondary, drawSecondary(r));
  }
  await writeOutput(o.out, render(r, formatOf(o)));
  if (r.warnings.length) note(o, `${r.warnings.length} warning(s); ${CAUTION}`);
  if (r.status === 'failed')
    throw checkFailed('the scintle widths could not be measured (see the warnings)');
}
