import { createColumnHelper } from '@tanstack/react-table';
import { useId, useMemo, useState } from 'react';
import type { DmFitResult, VisitFitJson } from '../../../../shared/schemas/dm-fit';
import { ACCENT, INK } from '../plots/colour';
import { ObsPlot } from '../plots/Plot';
import { DataNote, Figures, SubHeading } from './Figures';
import { decimalsFor, dec, fixed, median, mjdText, sig } from '../../lib/format';
import { FREQ_COLOUR, MARGIN_LEFT, plotFrame, RunPlot } from './RunPlot';
import { SortableTable } from '../DataTable';
import { CautionNote, WarningCount, WarningList } from './SummaryPanel';

const ALERT = '#b42318';
const MODEL_SHORT: Record<string, string> = {
  dm_only: 'DM only',
  alpha_fixed: 'α fixed',
  alpha_free: 'α free',
};
const MODEL_LABEL: Record<string, string> = {
  dm_only: 'DM only',
  alpha_fixed: 'DM + scattering, α fixed',
  alpha_free: 'DM + scattering, α free',
};

type Visit = VisitFitJson;
type Fitted = Visit & { dm: number; err: number };
/** Dots of visits with warnings are drawn open, in the alert colour. */
const WARNED_DOT = {
  fill: (d: Fitted) => (d.warnings.length ? 'white' : INK),
  stroke: (d: Fitted) => (d.warnings.length ? ALERT : INK),
};

const errOf = (v: Visit) => v.dm_err_scaled ?? v.dm_err;

/** log-spaced pieces of each visit's band, so a bar can be coloured by frequency along it */
function bandPieces(visits: Visit[], pieces = 14) {
  const out: { mjd: number; f1: number; f2: number; f: number }[] = [];
  for (const v of visits) {
    const lo = Math.log(v.freq_min_mhz);
    const step = (Math.log(v.freq_max_mhz) - lo) / pieces;
    for (let i = 0; i < pieces; i++)
      out.push({
        mjd: v.mjd,
        f1: Math.exp(lo + i * step),
        f2: Math.exp(lo + (i + 1) * step),
        f: Math.exp(lo + (i + 0.5) * step),
      });
  }
  return out;
}

/** DM per visit: the fitted DMs over time, fit quality, band coverage, and the visit table. */
export function DmFitView({ result }: { result: DmFitResult }) {
  const visits = result.visits;
  const fitted: Fitted[] = visits
    .filter((v) => v.status === 'fitted' && v.dm !== null && errOf(v) !== null)
    .map((v) => ({ ...v, dm: v.dm as number, err: errOf(v) as number }));
  const unconstrained = visits.filter((v) => !fitted.some((f) => f.mjd === v.mjd));
  const chromatic = visits.some((v) => v.models?.length);
  const offset = visits.some((v) => v.dm_kind === 'offset');
  const errMedian = median(fitted.map((v) => v.err));
  const decimals = decimalsFor(errMedian);
  const dmLabel = offset ? 'ΔDM (pc cm⁻³)' : 'DM (pc cm⁻³)';
  const mjds = visits.map((v) => v.mjd);
  const span = Math.max(...mjds) - Math.min(...mjds) || 1;
  const xDomain = [Math.min(...mjds) - span * 0.02, Math.max(...mjds) + span * 0.02];
  const warnings = visits.flatMap((v) =>
    v.warnings.map((text) => ({ where: `MJD ${mjdText(v.mjd)}`, text })),
  );
  const redChi = fitted.filter((v) => (v.reduced_chi2 ?? 0) > 0);
  const [onlyWarned, setOnlyWarned] = useState(false);
  const filterId = useId();

  if (!visits.length)
    return (
      <p className="text-sm text-ink-soft">
        This result holds no visits. Check the input file and re-run{' '}
        <code className="num">sightline dm fit</code>.
      </p>
    );

  const xAxis = { label: 'MJD', domain: xDomain, tickFormat: (d: number) => String(d) };
  // keep the axis on the values: error bars far larger than usual run off the plot (clipped)
  const reach = 5 * errMedian;
  const yDomain = fitted.length
    ? [
        Math.min(...fitted.map((v) => v.dm - Math.min(v.err, reach))),
        Math.max(...fitted.map((v) => v.dm + Math.min(v.err, reach))),
      ]
    : [0, 1];
  const clipped = fitted.filter(
    (v) => v.dm - v.err < yDomain[0] || v.dm + v.err > yDomain[1],
  ).length;
  const withWarnings = fitted.filter((v) => v.warnings.length > 0).length;

  return (
    <div className="flex flex-col gap-5">
      <Figures
        items={[
          { label: 'Visits', value: result.summary.n_visits },
          { label: 'Fitted', value: result.summary.n_fitted },
          { label: 'Unconstrained', value: result.summary.n_unconstrained },
          {
            label: 'Median σ(DM), pc cm⁻³',
            value: sig(errMedian, 2),
            hint: 'scaled error where the fit scaled it',
          },
        ]}
      />
      <CautionNote cautions={result.cautions} />
      <div className="flex flex-col gap-1">
        <SubHeading>Warnings</SubHeading>
        <WarningList items={warnings} of="visit" />
      </div>

      <RunPlot
        title={`${offset ? 'DM offset' : 'DM'} per visit`}
        summary={`${fitted.length} fitted visit${fitted.length === 1 ? '' : 's'} (DM ± 1σ, scaled where the fit scaled it; open red circles carry warnings)${clipped ? `; ${clipped} error bar${clipped === 1 ? '' : 's'} more than 5× the median run${clipped === 1 ? 's' : ''} off the plot` : ''}${unconstrained.length ? `; ${unconstrained.length} unconstrained, marked by dashed red lines` : ''}.`}
        deps={[result]}
        make={(width) =>
          ObsPlot.plot({
            ...plotFrame(width, 300),
            x: xAxis,
            y: { label: dmLabel, domain: yDomain, nice: true },
            clip: true,
            marks: [
              offset ? ObsPlot.ruleY([0], { stroke: INK, strokeOpacity: 0.4 }) : null,
              ObsPlot.tickX(unconstrained, {
                x: 'mjd',
                stroke: ALERT,
                strokeDasharray: '4,3',
                strokeOpacity: 0.8,
              }),
              ObsPlot.ruleX(fitted, {
                x: 'mjd',
                y1: (d: Fitted) => d.dm - d.err,
                y2: (d: Fitted) => d.dm + d.err,
                stroke: INK,
                strokeOpacity: 0.55,
              }),
              ObsPlot.dot(fitted, {
                x: 'mjd',
                y: 'dm',
                r: 2.8,
                ...WARNED_DOT,
              }),
              ObsPlot.tip(
                fitted,
                ObsPlot.pointerX({
                  x: 'mjd',
                  y: 'dm',
                  title: (d: Fitted) =>
                    `MJD ${mjdText(d.mjd)}\n${offset ? 'ΔDM' : 'DM'} ${fixed(d.dm, decimals)} ± ${fixed(d.err, decimals)}\nreduced χ² ${sig(d.reduced_chi2, 3)}\n${d.warnings.length} warning(s)`,
                }),
              ),
            ],
          })
        }
      />

      {redChi.length > 0 && (
        <RunPlot
          title="Fit quality per visit"
          summary={`Reduced χ² of each visit's fit on a log axis; the line marks 1. ${redChi.filter((v) => (v.reduced_chi2 ?? 0) > 2).length} of ${redChi.length} visits lie above 2.`}
          deps={[result]}
          make={(width) =>
            ObsPlot.plot({
              ...plotFrame(width, 170),
              x: xAxis,
              y: { type: 'log', label: 'Reduced χ²', tickFormat: (d: number) => sig(d, 2) },
              marks: [
                ObsPlot.ruleY([1], { stroke: ACCENT }),
                ObsPlot.dot(redChi, {
                  x: 'mjd',
                  y: 'reduced_chi2',
                  r: 2.5,
                  ...WARNED_DOT,
                }),
                ObsPlot.tip(
                  redChi,
                  ObsPlot.pointerX({
                    x: 'mjd',
                    y: 'reduced_chi2',
                    title: (d: Fitted) =>
                      `MJD ${mjdText(d.mjd)}\nreduced χ² ${sig(d.reduced_chi2, 3)} (${d.dof} dof)`,
                  }),
                ),
              ],
            })
          }
        />
      )}

      <RunPlot
        title="Band coverage per visit"
        summary={`Each bar spans a visit's lowest to highest frequency, coloured by frequency; a long bar gives the fit a long lever arm in ν⁻².`}
        deps={[result]}
        make={(width) =>
          ObsPlot.plot({
            ...plotFrame(width, 200),
            x: xAxis,
            y: { type: 'log', label: 'Frequency (MHz)', tickFormat: (d: number) => String(d) },
            color: { ...FREQ_COLOUR, legend: true },
            marks: [
              ObsPlot.ruleX(bandPieces(visits), {
                x: 'mjd',
                y1: 'f1',
                y2: 'f2',
                stroke: 'f',
                strokeWidth: Math.max(2, Math.min(6, (width - MARGIN_LEFT) / visits.length / 2.5)),
              }),
              ObsPlot.tip(
                visits,
                ObsPlot.pointerX({
                  x: 'mjd',
                  y: (v: Visit) => Math.sqrt(v.freq_min_mhz * v.freq_max_mhz),
                  title: (v: Visit) =>
                    `MJD ${mjdText(v.mjd)}\n${sig(v.freq_min_mhz, 4)}–${sig(v.freq_max_mhz, 4)} MHz\n${v.n_toas} arrival times, ${v.n_freqs} frequencies`,
                }),
              ),
            ],
          })
        }
      />
      <DataNote>
        A run keeps one fitted value per visit, not the residual of each arrival time, so the
        residuals against ν⁻² cannot be drawn here; the reduced χ² above shows how well each visit
        fitted its arrival times. Re-run <code className="num">sightline dm fit</code> on the
        recorded input (same SHA-256) to work with the arrival times themselves.
      </DataNote>

      {chromatic && <ChromaticPart visits={visits} xAxis={xAxis} />}

      <div className="flex flex-col gap-1">
        <div className="flex flex-wrap items-baseline justify-between gap-2">
          <SubHeading>Visits</SubHeading>
          <label htmlFor={filterId} className="flex items-center gap-1.5 text-xs">
            <input
              id={filterId}
              type="checkbox"
              checked={onlyWarned}
              onChange={(e) => setOnlyWarned(e.target.checked)}
            />
            Only visits with warnings ({withWarnings + unconstrained.length})
          </label>
        </div>
        <VisitTable
          visits={
            onlyWarned
              ? visits.filter((v) => v.warnings.length > 0 || v.status !== 'fitted')
              : visits
          }
          decimals={decimals}
          chromatic={chromatic}
          offset={offset}
        />
      </div>
    </div>
  );
}

const col = createColumnHelper<Visit>();

function VisitTable({
  visits,
  decimals,
  chromatic,
  offset,
}: {
  visits: Visit[];
  decimals: number;
  chromatic: boolean;
  offset: boolean;
}) {
  const columns = useMemo(
    () => [
      col.accessor('mjd', {
        header: 'MJD',
        cell: (c) => mjdText(c.getValue()),
        meta: { numeric: true },
      }),
      col.accessor('n_toas', { header: 'TOAs', meta: { numeric: true } }),
      col.accessor((v) => v.freq_max_mhz / v.freq_min_mhz, {
        id: 'band',
        header: 'Band (MHz)',
        cell: (c) =>
          `${sig(c.row.original.freq_min_mhz, 4)}–${sig(c.row.original.freq_max_mhz, 4)}`,
        meta: { numeric: true },
      }),
      col.accessor((v) => v.dm, {
        id: 'dm',
        header: offset ? 'ΔDM' : 'DM',
        cell: (c) => dec(c.getValue(), decimals),
        sortUndefined: 'last',
        meta: { numeric: true },
      }),
      col.accessor((v) => errOf(v), {
        id: 'err',
        header: 'σ',
        cell: (c) => dec(c.getValue(), decimals),
        meta: { numeric: true },
      }),
      col.accessor('reduced_chi2', {
        header: 'χ²_red',
        cell: (c) => sig(c.getValue(), 3),
        meta: { numeric: true },
      }),
      ...(chromatic
        ? [
            col.accessor((v) => v.tau_ref_us ?? null, {
              id: 'tau',
              header: 'τ_ref (µs)',
              cell: (c) => sig(c.getValue(), 3),
              meta: { numeric: true },
            }),
            col.accessor((v) => v.preferred ?? '', {
              id: 'preferred',
              header: 'Preferred',
              cell: (c) => MODEL_SHORT[c.getValue()] ?? '—',
            }),
          ]
        : []),
      col.accessor((v) => v.warnings.length, {
        id: 'warnings',
        header: 'Warnings',
        cell: (c) => <WarningCount warnings={c.row.original.warnings} />,
        meta: { numeric: true },
      }),
      col.accessor('status', {
        header: 'Status',
        cell: (c) =>
          c.getValue() === 'fitted' ? (
            'fitted'
          ) : (
            <span className="font-medium text-alert">unconstrained</span>
          ),
      }),
    ],
    [decimals, chromatic, offset],
  );
  if (!visits.length) return <p className="text-sm text-ink-soft">No visit matches.</p>;
  return (
    <SortableTable
      data={visits}
      columns={columns}
      caption="Visits of this fit"
      initialSort={[{ id: 'mjd', desc: false }]}
      scroll
    />
  );
}

function ChromaticPart({
  visits,
  xAxis,
}: {
  visits: Visit[];
  xAxis: { label: string; domain: number[]; tickFormat: (d: number) => string };
}) {
  const withModels = visits.filter((v) => v.models?.length);
  const [mjd, setMjd] = useState(withModels[0]?.mjd);
  const selectId = useId();
  const counts = new Map<string, number>();
  for (const v of withModels)
    counts.set(v.preferred ?? '?', (counts.get(v.preferred ?? '?') ?? 0) + 1);
  const chosen = withModels.find((v) => v.mjd === mjd) ?? withModels[0];
  const taus = visits.filter(
    (v): v is Visit & { tau_ref_us: number; tau_ref_err_us: number } =>
      v.status === 'fitted' && typeof v.tau_ref_us === 'number' && v.tau_ref_us > 0,
  );
  const nonPositive = visits.filter(
    (v) => v.status === 'fitted' && typeof v.tau_ref_us === 'number' && v.tau_ref_us <= 0,
  ).length;
  const refFreq = visits.find((v) => v.ref_freq_mhz)?.ref_freq_mhz;
  const bestBic = Math.min(...(chosen?.models ?? []).map((m) => m.bic));

  return (
    <div className="flex flex-col gap-3">
      {taus.length > 0 && (
        <RunPlot
          title="Scattering term per visit"
          summary={`τ at ${refFreq ?? '?'} MHz from the chromatic fit of each visit (± 1σ, log axis; lower ends below zero are cut off)${nonPositive ? `; ${nonPositive} visit${nonPositive === 1 ? '' : 's'} with τ ≤ 0 cannot be drawn on it (see the table)` : ''}.`}
          deps={[visits]}
          make={(width) =>
            ObsPlot.plot({
              ...plotFrame(width, 220),
              x: xAxis,
              y: {
                type: 'log',
                label: `τ at ${refFreq ?? '?'} MHz (µs)`,
                tickFormat: (d: number) => sig(d, 2),
              },
              marks: [
                ObsPlot.ruleX(taus, {
                  x: 'mjd',
                  y1: (d: (typeof taus)[number]) =>
                    Math.max(d.tau_ref_us - (d.tau_ref_err_us ?? 0), d.tau_ref_us * 0.05),
                  y2: (d: (typeof taus)[number]) => d.tau_ref_us + (d.tau_ref_err_us ?? 0),
                  stroke: INK,
                  strokeOpacity: 0.55,
                }),
                ObsPlot.dot(taus, { x: 'mjd', y: 'tau_ref_us', r: 2.5, fill: INK }),
                ObsPlot.tip(
                  taus,
                  ObsPlot.pointerX({
                    x: 'mjd',
                    y: 'tau_ref_us',
                    title: (d: (typeof taus)[number]) =>
                      `MJD ${mjdText(d.mjd)}\nτ ${sig(d.tau_ref_us, 3)} ± ${sig(d.tau_ref_err_us, 2)} µs\nα ${sig(d.alpha, 3)}`,
                  }),
                ),
              ],
            })
          }
        />
      )}
      <div className="flex flex-col gap-2">
        <SubHeading>Model comparison</SubHeading>
        <p className="text-sm">
          Preferred model (lowest BIC):{' '}
          {[...counts.entries()].map(([name, n], i) => (
            <span key={name}>
              {i > 0 && '; '}
              {MODEL_LABEL[name] ?? name} in <span className="num">{n}</span> visit
              {n === 1 ? '' : 's'}
            </span>
          ))}
          .
        </p>
        {chosen && (
          <>
            <label htmlFor={selectId} className="flex flex-wrap items-center gap-2 text-sm">
              Visit
              <select
                id={selectId}
                value={chosen.mjd}
                onChange={(e) => setMjd(Number(e.target.value))}
                className="num rounded-sm border border-edge bg-panel px-2 py-1 text-sm"
              >
                {withModels.map((v) => (
                  <option key={v.mjd} value={v.mjd}>
                    MJD {mjdText(v.mjd)} — {MODEL_LABEL[v.preferred ?? ''] ?? '?'}
                  </option>
                ))}
              </select>
            </label>
            <div className="overflow-x-auto rounded-sm border border-rule bg-panel">
              <table className="w-full border-collapse text-sm">
                <caption className="sr-only">
                  Models compared for the visit at MJD {mjdText(chosen.mjd)}
                </caption>
                <thead>
                  <tr className="border-b border-rule text-xs text-ink-soft">
                    <th scope="col" className="px-2 py-1.5 text-left font-medium">
                      Model
                    </th>
                    {['χ²', 'dof', 'AIC', 'BIC', 'ΔBIC', 'DM', 'α', 'τ_ref (µs)'].map((h) => (
                      <th key={h} scope="col" className="px-2 py-1.5 text-right font-medium">
                        {h}
                      </th>
                    ))}
                  </tr>
                </thead>
                <tbody>
                  {chosen.models!.map((m) => {
                    const preferred = m.name === chosen.preferred;
                    return (
                      <tr
                        key={m.name}
                        className={`border-b border-rule last:border-0 ${preferred ? 'bg-paper font-semibold' : ''}`}
                      >
                        <th scope="row" className="px-2 py-1 text-left font-[inherit]">
                          {MODEL_LABEL[m.name] ?? m.name}
                          {preferred && (
                            <span className="ml-2 rounded-sm border border-accent px-1 text-xs font-medium text-accent">
                              preferred
                            </span>
                          )}
                        </th>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {sig(m.chi2, 4)}
                        </td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">{m.dof}</td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {dec(m.aic, 1)}
                        </td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {dec(m.bic, 1)}
                        </td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {dec(m.bic - bestBic, 1)}
                        </td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {dec(m.dm, decimalsFor(m.dm_err))} ±{' '}
                          {dec(m.dm_err, decimalsFor(m.dm_err))}
                        </td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {sig(m.alpha, 3)}
                        </td>
                        <td className="num px-2 py-1 text-right whitespace-nowrap">
                          {sig(m.tau_ref_us, 3)}
                        </td>
                      </tr>
                    );
                  })}
                </tbody>
              </table>
            </div>
          </>
        )}
      </div>
    </div>
  );
}
