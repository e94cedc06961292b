import { createColumnHelper } from '@tanstack/react-table';
import { useMemo, type ReactNode } from 'react';
import type { ScatterBand, ScatterFitResult } from '../../../../shared/schemas/scatter-fit';
import { ACCENT, freqColour, INK } from '../plots/colour';
import { ObsPlot } from '../plots/Plot';
import { DataNote, Figures, SubHeading } from './Figures';
import { sig } from '../../lib/format';
import { FREQ_COLOUR, plotFrame, RunPlot } from './RunPlot';
import { SortableTable } from '../DataTable';
import { CautionNote, WarningCount, WarningList } from './SummaryPanel';

const MODEL_WORDS: Record<ScatterFitResult['model'], string> = {
  gauss: 'one Gaussian',
  gauss2: 'two Gaussians',
  gauss3: 'three Gaussians',
  template: 'a template',
};
/** a frequency as written: at most two decimals, none when whole */
const mhz = (f: number) => String(Number(f.toFixed(2)));

type Fitted = ScatterBand & { tau_err_us: number };
type Limit = ScatterBand & { tau_upper_us: number };

/** Scattering: τ per band on log–log axes with the τ(ν) power law, and the band table. */
export function ScatterFitView({ result }: { result: ScatterFitResult }) {
  const bands = result.bands;
  const fitted = bands.filter(
    (b): b is Fitted => b.status === 'fitted' && b.tau_us > 0 && b.tau_err_us !== null,
  );
  const limits = bands.filter(
    (b): b is Limit => b.status === 'upper_limit' && (b.tau_upper_us ?? 0) > 0,
  );
  const failed = bands.filter((b) => b.status === 'failed');
  const pl = result.power_law;
  const exp = result.expected;
  const warnings = [
    ...result.warnings.map((text) => ({ where: result.source, text })),
    ...bands.flatMap((b) => b.warnings.map((text) => ({ where: `${mhz(b.freq_mhz)} MHz`, text }))),
  ];

  const freqs = bands.map((b) => b.freq_mhz).concat(exp ? [exp.freq_mhz] : []);
  const fLo = Math.min(...freqs) / 1.12;
  const fHi = Math.max(...freqs) * 1.12;
  const law = (f: number) => (pl ? pl.tau_ref_us * (f / pl.ref_freq_mhz) ** -pl.alpha : NaN);
  const curve = pl
    ? Array.from({ length: 61 }, (_, i) => {
        const f = fLo * (fHi / fLo) ** (i / 60);
        return { f, tau: law(f) };
      })
    : [];
  const expBar = exp
    ? { lo: exp.tau_us * 10 ** -exp.scatter_dex, hi: exp.tau_us * 10 ** exp.scatter_dex }
    : null;

  if (!bands.length)
    return (
      <p className="text-sm text-ink-soft">
        This result holds no bands. Check the profile file and re-run{' '}
        <code className="num">sightline scatter fit</code>.
      </p>
    );

  const caption = [
    `τ per band (± 1σ) for ${fitted.length} fitted band${fitted.length === 1 ? '' : 's'}`,
    limits.length
      ? `${limits.length} 2σ upper limit${limits.length === 1 ? '' : 's'} (downward triangles)`
      : '',
    failed.length ? `${failed.length} failed band${failed.length === 1 ? '' : 's'} not drawn` : '',
    pl
      ? `line: τ = ${sig(pl.tau_ref_us, 3)} µs · (ν/${sig(pl.ref_freq_mhz, 4)} MHz)^−${sig(pl.alpha, 3)}`
      : 'no power law: too few fitted bands',
    exp
      ? `diamond: τ expected from the DM by the empirical τ–DM relation, bar ± ${exp.scatter_dex} dex`
      : '',
  ]
    .filter(Boolean)
    .join('; ')
    .concat('.');

  return (
    <div className="flex flex-col gap-5">
      <Figures
        items={[
          { label: 'Bands', value: bands.length },
          { label: 'Fitted', value: fitted.length },
          {
            label: pl?.alpha_fixed ? 'α (fixed)' : 'α',
            value: pl
              ? `${sig(pl.alpha, 3)}${pl.alpha_err ? ` ± ${sig(pl.alpha_err, 2)}` : ''}`
              : '—',
          },
          {
            label: pl ? `τ at ${sig(pl.ref_freq_mhz, 4)} MHz, µs` : 'τ, µs',
            value: pl ? `${sig(pl.tau_ref_us, 3)} ± ${sig(pl.tau_ref_err_us, 2)}` : '—',
          },
        ]}
      />
      <CautionNote cautions={result.cautions} />
      <div className="flex flex-col gap-1">
        <SubHeading>Warnings</SubHeading>
        <WarningList items={warnings} of="band" />
      </div>
      <RunPlot
        title="Scattering timescale against frequency"
        summary={caption}
        deps={[result]}
        make={(width) =>
          ObsPlot.plot({
            ...plotFrame(width, 360),
            x: { type: 'log', label: 'Frequency (MHz)', domain: [fLo, fHi], tickFormat: String },
            y: { type: 'log', label: 'τ (µs)', tickFormat: (d: number) => sig(d, 2) },
            color: { ...FREQ_COLOUR, legend: true },
            marks: [
              ObsPlot.lineY(curve, { x: 'f', y: 'tau', stroke: ACCENT, strokeWidth: 1.5 }),
              expBar && exp
                ? ObsPlot.ruleX([exp], {
                    x: 'freq_mhz',
                    y1: () => expBar.lo,
                    y2: () => expBar.hi,
                    stroke: INK,
                    strokeDasharray: '3,3',
                    strokeOpacity: 0.6,
                  })
                : null,
              exp
                ? ObsPlot.dot([exp], {
                    x: 'freq_mhz',
                    y: 'tau_us',
                    symbol: 'diamond',
                    r: 5,
                    stroke: INK,
                    fill: 'white',
                  })
                : null,
              ObsPlot.ruleX(fitted, {
                x: 'freq_mhz',
                y1: (b: Fitted) => Math.max(b.tau_us - b.tau_err_us, b.tau_us * 0.05),
                y2: (b: Fitted) => b.tau_us + b.tau_err_us,
                stroke: 'freq_mhz',
                strokeWidth: 1.5,
              }),
              ObsPlot.dot(fitted, {
                x: 'freq_mhz',
                y: 'tau_us',
                r: 4,
                fill: 'freq_mhz',
                stroke: INK,
                strokeWidth: 0.75,
              }),
              ObsPlot.dot(limits, {
                x: 'freq_mhz',
                y: 'tau_upper_us',
                symbol: 'triangle',
                rotate: 180,
                r: 5,
                fill: 'freq_mhz',
                stroke: INK,
                strokeWidth: 0.75,
              }),
              ObsPlot.tip(
                [...fitted, ...limits],
                ObsPlot.pointer({
                  x: 'freq_mhz',
                  y: (b: ScatterBand) =>
                    b.status === 'upper_limit' ? (b.tau_upper_us as number) : b.tau_us,
                  title: (b: ScatterBand) =>
                    b.status === 'upper_limit'
                      ? `${mhz(b.freq_mhz)} MHz\nτ < ${sig(b.tau_upper_us, 3)} µs (2σ upper limit)\nS/N ${sig(b.snr, 3)}`
                      : `${mhz(b.freq_mhz)} MHz\nτ ${sig(b.tau_us, 3)} ± ${sig(b.tau_err_us, 2)} µs\nreduced χ² ${sig(b.reduced_chi2, 3)}, S/N ${sig(b.snr, 3)}`,
                }),
              ),
            ],
          })
        }
      />
      <DataNote>
        A run keeps the fitted parameters of each band (<code className="num">params</code>), not
        the profile samples, so profiles, model and residuals cannot be drawn here;{' '}
        <code className="num">sightline scatter fit FILE --plot out.png</code> draws them per band
        from the recorded input.
      </DataNote>
      <dl className="grid grid-cols-1 gap-x-6 gap-y-0.5 text-xs sm:grid-cols-2">
        <Item term="Profile model">
          {MODEL_WORDS[result.model]} (<span className="num">{result.model}</span>) convolved with a
          one-sided exponential
        </Item>
        <Item term="Visit">
          <span className="num">MJD {result.mjd}</span>
        </Item>
        <Item term="Period, bins">
          <span className="num">
            {Number((result.period_s * 1e3).toPrecision(6))} ms, {result.nbin} bins
          </span>
        </Item>
        <Item term="DM">
          <span className="num">{result.dm === null ? '—' : Number(result.dm.toPrecision(7))}</span>{' '}
          pc cm⁻³
        </Item>
        {pl && (
          <Item term="Power-law fit">
            <span className="num">
              χ² {sig(pl.chi2, 3)} for {pl.dof} dof (reduced {sig(pl.reduced_chi2, 3)}),{' '}
              {pl.n_bands} bands
            </span>
          </Item>
        )}
        {exp && (
          <Item term="Expected from DM">
            <span className="num">
              τ {sig(exp.tau_us, 3)} µs at {sig(exp.freq_mhz, 4)} MHz (± {exp.scatter_dex} dex)
            </span>{' '}
            — {exp.relation}
          </Item>
        )}
      </dl>
      <div className="flex flex-col gap-1">
        <SubHeading>Bands</SubHeading>
        <BandTable bands={bands} />
      </div>
    </div>
  );
}

function Item({ term, children }: { term: string; children: ReactNode }) {
  return (
    <div>
      <dt className="inline text-ink-soft">{term}: </dt>
      <dd className="inline">{children}</dd>
    </div>
  );
}

const col = createColumnHelper<ScatterBand>();
const STATUS_WORDS: Record<ScatterBand['status'], string> = {
  fitted: 'fitted',
  upper_limit: 'upper limit',
  failed: 'failed',
};

function BandTable({ bands }: { bands: ScatterBand[] }) {
  const columns = useMemo(
    () => [
      col.accessor('freq_mhz', {
        header: 'Frequency (MHz)',
        cell: (c) => (
          <span className="inline-flex items-center gap-1.5">
            <span
              aria-hidden="true"
              className="inline-block size-2.5 rounded-full"
              style={{ background: freqColour(c.getValue()) }}
            />
            {c.getValue().toFixed(2)}
          </span>
        ),
        meta: { numeric: true },
      }),
      col.accessor('status', {
        header: 'Status',
        cell: (c) =>
          c.getValue() === 'failed' ? (
            <span className="font-medium text-alert">failed</span>
          ) : (
            STATUS_WORDS[c.getValue()]
          ),
      }),
      col.accessor((b) => (b.status === 'upper_limit' ? (b.tau_upper_us ?? null) : b.tau_us), {
        id: 'tau',
        header: 'τ (µs)',
        cell: (c) =>
          c.row.original.status === 'upper_limit'
            ? `< ${sig(c.getValue(), 3)}`
            : sig(c.getValue(), 3),
        meta: { numeric: true },
      }),
      col.accessor('tau_err_us', {
        header: 'σ (µs)',
        cell: (c) => sig(c.getValue(), 2),
        meta: { numeric: true },
      }),
      col.accessor('reduced_chi2', {
        header: 'χ²_red',
        cell: (c) => sig(c.getValue(), 3),
        meta: { numeric: true },
      }),
      col.accessor('snr', {
        header: 'S/N',
        cell: (c) => sig(c.getValue(), 3),
        meta: { numeric: true },
      }),
      col.accessor((b) => b.warnings.length, {
        id: 'warnings',
        header: 'Warnings',
        cell: (c) => <WarningCount warnings={c.row.original.warnings} />,
        meta: { numeric: true },
      }),
    ],
    [],
  );
  return (
    <SortableTable
      data={bands}
      columns={columns}
      caption="Bands of this scattering fit"
      initialSort={[{ id: 'freq_mhz', desc: false }]}
    />
  );
}
