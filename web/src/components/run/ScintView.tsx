import { useId, type ReactNode } from 'react';
import type { ScintResult } from '../../../../shared/schemas/scint';
import { sig } from '../../lib/format';
import { Figures, SubHeading } from './Figures';
import { AcfFigure, DynamicSpectrumFigure, SecondarySpectrumFigure } from './ScintPictures';
import { ScintTauRoutes } from './ScintTauRoutes';
import { CautionNote, WarningList } from './SummaryPanel';

type RfiKind = ScintResult['rfi']['channels'][number]['kind'];
const RFI_KINDS: { kind: RfiKind; words: string }[] = [
  { kind: 'persistent', words: 'persistent (flagged in every sub-integration)' },
  { kind: 'intermittent', words: 'intermittent (in some sub-integrations)' },
  { kind: 'dead', words: 'dead (no signal)' },
  { kind: 'given', words: 'given beforehand (mask)' },
];

const freqText = (f: number) => String(Number(f.toFixed(2)));
/** a number as written: up to six significant figures, no trailing zeros */
const plain = (x: number) => String(Number(x.toPrecision(6)));
const pctText = (f: number) => `${sig(100 * f, 3)} %`;

/** Consecutive integers as ranges: [1,2,3,7] → [[1,3],[7,7]]. */
export function runsOf(xs: number[]): [number, number][] {
  const s = [...new Set(xs)].sort((a, b) => a - b);
  const out: [number, number][] = [];
  for (const x of s) {
    const last = out[out.length - 1];
    if (last && x === last[1] + 1) last[1] = x;
    else out.push([x, x]);
  }
  return out;
}

function Item({ term, children }: { term: ReactNode; children: ReactNode }) {
  return (
    <div className="grid grid-cols-[10rem_1fr] gap-x-3 py-0.5">
      <dt className="text-ink-soft">{term}</dt>
      <dd className="min-w-0">{children}</dd>
    </div>
  );
}

/** The flagged channels of one kind: channel ranges with their frequencies. */
function ChannelList({ result, kind }: { result: ScintResult; kind: RfiKind }) {
  const chans = result.rfi.channels.filter((c) => c.kind === kind);
  if (!chans.length) return <span className="text-ink-soft">none</span>;
  const freqOf = new Map(chans.map((c) => [c.channel, c.freq_mhz]));
  return (
    <span className="num">
      {runsOf(chans.map((c) => c.channel))
        .map(([a, b]) => {
          const fa = freqOf.get(a) as number;
          const fb = freqOf.get(b) as number;
          return a === b
            ? `ch ${a} (${freqText(fa)} MHz)`
            : `ch ${a}–${b} (${freqText(Math.min(fa, fb))}–${freqText(Math.max(fa, fb))} MHz)`;
        })
        .join(', ')}
    </span>
  );
}

/** Where the interference was and what flagging it cost. */
function Interference({ result }: { result: ScintResult }) {
  const rfi = result.rfi;
  const t0 = result.pictures.dynspec.time_s[0];
  const subRuns = runsOf(rfi.subints_flagged);
  const startOf = (i: number) => t0 + i * result.subint_s;
  const headingId = useId();
  return (
    <section aria-labelledby={headingId} className="flex flex-col gap-1">
      <SubHeading>
        <span id={headingId}>Interference</span>
      </SubHeading>
      <p className="text-sm">
        <span className="num">{pctText(rfi.flagged_fraction)}</span> of the pixels flagged; the
        flags cost <span className="num">{pctText(rfi.snr_cost_fraction)}</span> of the
        spectrum&rsquo;s S/N.
      </p>
      <dl className="text-xs">
        {RFI_KINDS.map(({ kind, words }) => {
          const n = rfi.channels.filter((c) => c.kind === kind).length;
          return (
            <Item
              key={kind}
              term={
                <>
                  Channels, {kind} (<span className="num">{n}</span>)
                </>
              }
            >
              <span className="sr-only">{words}: </span>
              <ChannelList result={result} kind={kind} />
            </Item>
          );
        })}
        <Item
          term={
            <>
              Sub-integrations (<span className="num">{rfi.subints_flagged.length}</span>)
            </>
          }
        >
          {subRuns.length ? (
            <span className="num">
              {subRuns
                .map(([a, b]) =>
                  a === b
                    ? `#${a} (t ${plain(startOf(a))} s)`
                    : `#${a}–${b} (t ${plain(startOf(a))}–${plain(startOf(b))} s)`,
                )
                .join(', ')}
            </span>
          ) : (
            <span className="text-ink-soft">none</span>
          )}
        </Item>
        <Item term="Single pixels">
          <span className="num">{rfi.pixels_flagged}</span>
        </Item>
        <Item term="Thresholds">
          interquartile fence <span className="num">k = {rfi.fence_k}</span> for channels and
          sub-integrations; <span className="num">{rfi.pixel_sigma}σ</span> (median absolute
          deviation) for pixels
        </Item>
      </dl>
    </section>
  );
}

/** The headline: the measured widths and τ, or for an unresolved spectrum its limits. */
function Headline({ result }: { result: ScintResult }) {
  const at = freqText(result.ref_freq_mhz);
  const pm = (v: number | null, e: number | null) =>
    v === null ? '—' : e === null ? sig(v, 3) : `${sig(v, 3)} ± ${sig(e, 2)}`;
  if (result.status === 'unresolved')
    return (
      <div className="flex flex-col gap-2">
        <Figures
          items={[
            {
              label: 'Δν_d, MHz',
              value: result.dnu_d_upper_mhz !== null ? `< ${sig(result.dnu_d_upper_mhz, 3)}` : '—',
              hint: 'upper limit: the channel width',
            },
            { label: 'Δt_d, s', value: '—' },
            { label: 'Scintles N_s', value: '—' },
            {
              label: `τ at ${at} MHz, µs`,
              value: result.tau_lower_us !== null ? `> ${sig(result.tau_lower_us, 3)}` : '—',
              hint: `lower limit, τ = C₁/(2π Δν_d) with C₁ = ${result.c1}`,
            },
          ]}
        />
        <p role="note" className="rounded-sm border-l-4 border-accent bg-panel px-3 py-2 text-sm">
          <span className="font-semibold">Scintles not resolved. </span>
          The spectrum shows no scintle structure across channels: the decorrelation bandwidth is
          below the channel width or the scintles are washed out. Only limits follow:{' '}
          <span className="num whitespace-nowrap">
            Δν_d &lt; {sig(result.dnu_d_upper_mhz, 3)} MHz
          </span>
          , so{' '}
          <span className="num whitespace-nowrap">τ &gt; {sig(result.tau_lower_us, 3)} µs</span> at{' '}
          <span className="num">{at} MHz</span> (C₁ = <span className="num">{result.c1}</span>).
          Data with finer channels may resolve them.
        </p>
      </div>
    );
  if (result.status === 'failed')
    return (
      <p role="note" className="rounded-sm border-l-4 border-alert bg-panel px-3 py-2 text-sm">
        <span className="font-semibold">No scintillation measured. </span>
        The analysis could not measure the scintles of this spectrum; the warnings below say why.
      </p>
    );
  return (
    <div className="flex flex-col gap-1">
      <Figures
        items={[
          {
            label: 'Δν_d, MHz',
            value: pm(result.dnu_d_mhz, result.dnu_d_err_mhz),
            hint: 'decorrelation bandwidth: half width at half maximum of the frequency cut',
          },
          {
            label: 'Δt_d, s',
            value: pm(result.dt_d_s, result.dt_d_err_s),
            hint: 'scintillation time: half width at 1/e of the time cut',
          },
          {
            label: 'Scintles N_s',
            value: sig(result.n_scintles, 3),
            hint: 'scintles in the spectrum; sets the finite-scintle error',
          },
          {
            label: `τ at ${at} MHz, µs`,
            value: pm(result.tau_us, result.tau_err_us),
            hint: `τ = C₁/(2π Δν_d) with C₁ = ${result.c1}`,
          },
        ]}
      />
      <p className="text-xs text-ink-soft">
        τ = C₁/(2π Δν_d) with C₁ = <span className="num">{result.c1}</span>, at the band centre{' '}
        <span className="num">{at} MHz</span>; errors include the finite-scintle fraction 1/√N_s.
      </p>
    </div>
  );
}

/** Scintillation of one visit: widths, τ, interference, the three pictures and τ by two routes. */
export function ScintView({ result, pulsar }: { result: ScintResult; pulsar: string | null }) {
  const arc = result.arc_curvature;
  return (
    <div className="flex flex-col gap-5">
      <Headline result={result} />
      <CautionNote cautions={result.cautions} />
      <div className="flex flex-col gap-1">
        <SubHeading>Warnings</SubHeading>
        <WarningList
          items={result.warnings.map((text) => ({
            where: `${result.source}${result.mjd ? ` MJD ${result.mjd}` : ''}`,
            text,
          }))}
          of="spectrum"
        />
      </div>
      <dl className="grid grid-cols-1 gap-x-6 gap-y-0.5 text-xs sm:grid-cols-2">
        <Item term="Visit">
          <span className="num">{result.mjd ? `MJD ${result.mjd}` : '—'}</span>
          {result.receiver && <> · receiver {result.receiver}</>}
        </Item>
        <Item term="Band">
          <span className="num">
            {freqText(result.freq_min_mhz)}–{freqText(result.freq_max_mhz)} MHz
          </span>
        </Item>
        <Item term="Channels">
          <span className="num">
            {result.nchan} × {plain(result.channel_mhz)} MHz
          </span>
        </Item>
        <Item term="Sub-integrations">
          <span className="num">
            {result.nsub} × {plain(result.subint_s)} s
          </span>
        </Item>
        <Item term="Arc curvature η">
          {arc ? (
            <span className="num">
              {sig(arc.eta_s3, 3)} s³ ({sig(arc.eta_lo_s3, 3)}–{sig(arc.eta_hi_s3, 3)}),{' '}
              {sig(arc.contrast_db, 2)} dB contrast
            </span>
          ) : (
            <span className="text-ink-soft">no arc fitted</span>
          )}
        </Item>
      </dl>
      <ScintTauRoutes result={result} pulsar={pulsar} />
      <Interference result={result} />
      <DynamicSpectrumFigure result={result} />
      <AcfFigure result={result} />
      <SecondarySpectrumFigure result={result} />
    </div>
  );
}
