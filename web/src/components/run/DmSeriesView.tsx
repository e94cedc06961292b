import { createColumnHelper } from '@tanstack/react-table';
import { useMemo, type ReactNode } from 'react';
import type {
  DmSeriesResult,
  SeriesPoint,
  SmoothPoint,
} from '../../../../shared/schemas/dm-series';
import { ACCENT, BAND, INK } from '../plots/colour';
import { ObsPlot } from '../plots/Plot';
import { Figures, SubHeading } from './Figures';
import { decimalsFor, dec, fixed, median, mjdText, sig } from '../../lib/format';
import { plotFrame, RunPlot } from './RunPlot';
import { SortableTable } from '../DataTable';
import { CautionNote, WarningList } from './SummaryPanel';

type Source = DmSeriesResult['sources'][number];

const REFERENCE_WORDS: Record<Source['reference'], string> = {
  weighted_mean: 'the weighted mean',
  given: 'given',
  zero: 'zero: the series holds DM offsets',
};

/** DM series: DM(t) with errors, the smoothed curve and its 1σ band, the solar-wind model. */
export function DmSeriesView({ result }: { result: DmSeriesResult }) {
  const warnings = result.sources.flatMap((s) =>
    (s.warnings ?? []).map((text) => ({ where: s.source, text })),
  );
  const notes = (
    <>
      <CautionNote cautions={result.cautions} />
      <div className="flex flex-col gap-1">
        <SubHeading>Warnings</SubHeading>
        <WarningList items={warnings} of="pulsar" />
      </div>
    </>
  );
  const single = result.sources.length === 1;
  return (
    <div className="flex flex-col gap-5">
      {!single && notes}
      {result.sources.length === 0 || result.points.length === 0 ? (
        <p className="text-sm text-ink-soft">
          This series holds no points: no visit could be fitted. Look at the DM fit of the same
          input for unconstrained visits, then run <code className="num">sightline dm series</code>{' '}
          again.
        </p>
      ) : (
        result.sources.map((s) => (
          <SourceSeries
            key={s.source}
            source={s}
            many={!single}
            notes={single ? notes : null}
            points={result.points.filter((p) => p.source === s.source)}
            smooth={(result.smooth ?? []).filter((p) => p.source === s.source)}
            solar={result.solar}
          />
        ))
      )}
    </div>
  );
}

function SourceSeries({
  source,
  many,
  notes,
  points,
  smooth,
  solar,
}: {
  source: Source;
  many: boolean;
  notes: ReactNode;
  points: SeriesPoint[];
  smooth: SmoothPoint[];
  solar: DmSeriesResult['solar'];
}) {
  const offset = source.dm_kind === 'offset';
  const errMedian = median(points.map((p) => p.dm_err));
  const decimals = decimalsFor(errMedian);
  const solarPoints = points.filter((p): p is SeriesPoint & { dm_solar: number } =>
    Number.isFinite(p.dm_solar),
  );
  const mjds = points.map((p) => p.mjd);
  const first = Math.min(...mjds);
  const last = Math.max(...mjds);
  const pad = (last - first || 1) * 0.02;
  const xAxis = { label: 'MJD', domain: [first - pad, last + pad], tickFormat: String };
  const gp = source.gp;
  const dmLabel = offset ? 'ΔDM (pc cm⁻³)' : 'DM (pc cm⁻³)';
  const showRef = !offset || source.reference !== 'zero';

  return (
    <div className="flex flex-col gap-4">
      {many && <h3 className="text-base font-semibold">{source.source}</h3>}
      <Figures
        items={[
          { label: 'Points', value: points.length },
          { label: 'Span, days', value: dec(last - first, 0) },
          { label: 'Median σ(DM), pc cm⁻³', value: sig(errMedian, 2) },
          {
            label: 'Reference DM',
            value: sig(source.reference_dm, 6),
            hint: `reference: ${REFERENCE_WORDS[source.reference]}`,
          },
        ]}
      />
      {notes}
      <RunPlot
        title={`${offset ? 'DM offset' : 'DM'} over time${many ? ` — ${source.source}` : ''}`}
        summary={[
          `${points.length} visits (± 1σ)`,
          smooth.length
            ? `smoothed by Gaussian-process regression with a 1σ band${gp ? ` (length scale ${sig(gp.length_days, 3)} d)` : ''}`
            : 'not smoothed',
          `reference DM ${sig(source.reference_dm, 6)} (${REFERENCE_WORDS[source.reference]})`,
          solarPoints.length ? 'solar-wind DM already subtracted' : '',
        ]
          .filter(Boolean)
          .join('; ')
          .concat('.')}
        deps={[points, smooth, source]}
        make={(width) =>
          ObsPlot.plot({
            ...plotFrame(width, 320),
            x: xAxis,
            y: { label: dmLabel },
            marks: [
              ObsPlot.areaY(smooth, {
                x: 'mjd',
                y1: (d: SmoothPoint) => d.dm - d.dm_err,
                y2: (d: SmoothPoint) => d.dm + d.dm_err,
                fill: BAND,
                curve: 'linear',
              }),
              ObsPlot.ruleY([source.reference_dm], {
                stroke: INK,
                strokeOpacity: showRef ? 0.7 : 0.35,
                strokeDasharray: showRef ? '5,4' : undefined,
              }),
              showRef
                ? ObsPlot.text([source.reference_dm], {
                    y: (d: number) => d,
                    frameAnchor: 'right',
                    dy: -6,
                    text: () => 'reference DM',
                    fill: INK,
                  })
                : null,
              ObsPlot.lineY(smooth, { x: 'mjd', y: 'dm', stroke: ACCENT, strokeWidth: 1.5 }),
              ObsPlot.ruleX(points, {
                x: 'mjd',
                y1: (d: SeriesPoint) => d.dm - d.dm_err,
                y2: (d: SeriesPoint) => d.dm + d.dm_err,
                stroke: INK,
                strokeOpacity: 0.55,
              }),
              ObsPlot.dot(points, { x: 'mjd', y: 'dm', r: 2.6, fill: INK }),
              ObsPlot.tip(
                points,
                ObsPlot.pointerX({
                  x: 'mjd',
                  y: 'dm',
                  title: (d: SeriesPoint) =>
                    `MJD ${mjdText(d.mjd)}\n${offset ? 'ΔDM' : 'DM'} ${fixed(d.dm, decimals)} ± ${fixed(d.dm_err, decimals)}\n${d.n_toas} arrival times${d.dm_solar !== undefined ? `\nsolar wind ${sig(d.dm_solar, 3)} (subtracted)` : ''}`,
                }),
              ),
            ],
          })
        }
      />
      {gp && gp.usable === false && (
        <p className="text-sm text-ink-soft">
          The smoothing found no correlated DM variation (most scatter went to the white term): read
          the curve as a weighted mean, not as structure.
        </p>
      )}
      {solarPoints.length > 0 && (
        <RunPlot
          title="Solar-wind DM (subtracted)"
          summary={`The solar-wind model${solar ? ` (${solar.model}, n0 = ${sig(solar.n0_cm3, 3)} cm⁻³)` : ''} at each visit, already taken out of the series above; peaks mark the Sun's closest approach to the line of sight.`}
          deps={[solarPoints, solar]}
          make={(width) =>
            ObsPlot.plot({
              ...plotFrame(width, 160),
              x: xAxis,
              y: { label: 'Solar DM (pc cm⁻³)' },
              marks: [
                ObsPlot.lineY(solarPoints, { x: 'mjd', y: 'dm_solar', stroke: ACCENT }),
                ObsPlot.dot(solarPoints, { x: 'mjd', y: 'dm_solar', r: 1.8, fill: ACCENT }),
                ObsPlot.tip(
                  solarPoints,
                  ObsPlot.pointerX({
                    x: 'mjd',
                    y: 'dm_solar',
                    title: (d: SeriesPoint & { dm_solar: number }) =>
                      `MJD ${mjdText(d.mjd)}\nsolar-wind DM ${sig(d.dm_solar, 3)}`,
                  }),
                ),
              ],
            })
          }
        />
      )}
      {gp && (
        <dl className="flex flex-wrap gap-x-6 gap-y-0.5 text-xs">
          <div>
            <dt className="inline text-ink-soft">Smoothing amplitude </dt>
            <dd className="num inline">{sig(gp.amplitude_dm, 3)} pc cm⁻³</dd>
          </div>
          <div>
            <dt className="inline text-ink-soft">Length scale </dt>
            <dd className="num inline">{sig(gp.length_days, 3)} d</dd>
          </div>
          <div>
            <dt className="inline text-ink-soft">White term </dt>
            <dd className="num inline">{sig(gp.white_dm, 3)} pc cm⁻³</dd>
          </div>
        </dl>
      )}
      <div className="flex flex-col gap-1">
        <SubHeading>Points</SubHeading>
        <PointTable points={points} decimals={decimals} offset={offset} />
      </div>
    </div>
  );
}

const col = createColumnHelper<SeriesPoint>();

function PointTable({
  points,
  decimals,
  offset,
}: {
  points: SeriesPoint[];
  decimals: number;
  offset: boolean;
}) {
  const solar = points.some((p) => p.dm_solar !== undefined);
  const solarDecimals = decimalsFor(median(points.map((p) => p.dm_solar))) + 1;
  const columns = useMemo(
    () => [
      col.accessor('mjd', {
        header: 'MJD',
        cell: (c) => mjdText(c.getValue()),
        meta: { numeric: true },
      }),
      col.accessor('dm', {
        header: offset ? 'ΔDM' : 'DM',
        cell: (c) => dec(c.getValue(), decimals),
        meta: { numeric: true },
      }),
      col.accessor('dm_err', {
        header: 'σ',
        cell: (c) => dec(c.getValue(), decimals),
        meta: { numeric: true },
      }),
      col.accessor('n_toas', { header: 'TOAs', meta: { numeric: true } }),
      ...(solar
        ? [
            col.accessor((p) => p.dm_solar ?? null, {
              id: 'solar',
              header: 'Solar DM',
              cell: (c) => dec(c.getValue(), solarDecimals),
              meta: { numeric: true },
            }),
          ]
        : []),
    ],
    [decimals, offset, solar, solarDecimals],
  );
  return (
    <SortableTable
      data={points}
      columns={columns}
      caption="Points of the DM series"
      initialSort={[{ id: 'mjd', desc: false }]}
      scroll
    />
  );
}
