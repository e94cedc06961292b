import { Link } from 'react-router';
import { useRunDetails } from '../../api/compare';
import { useRuns } from '../../api/runs';
import type { BaselineView, RunDetail } from '../../api/types';
import { dateTime, KIND_LABEL } from '../../lib/time';
import { ObsPlot, Plot } from '../plots/Plot';
import { Empty, ErrorNotice, Loading } from '../QueryState';
import { StateBadge } from '../StateBadge';
import { dmAxisLabel, dmSeriesOf, TOKEN, type DmPoint } from './series';
import { RUN_SYMBOLS, Swatch, type SymbolName } from './Swatch';

/** how many of the pulsar's latest approved / superseded DM runs are drawn */
export const HISTORY_RUNS = 10;

interface RunTrace {
  run: RunDetail;
  points: DmPoint[];
  dmKind: 'absolute' | 'offset' | 'mixed';
  symbol: SymbolName;
  colour: string;
  filled: boolean;
  highlight: boolean;
}

function traceStyle(run: RunDetail, i: number, highlight: boolean) {
  return {
    symbol: RUN_SYMBOLS[i % RUN_SYMBOLS.length],
    // the active baseline in the accent; approved runs in ink; superseded ones faded and hollow
    colour: highlight ? TOKEN.accent : run.state === 'superseded' ? TOKEN.superseded : TOKEN.ink,
    filled: run.state !== 'superseded',
  };
}

function HistoryPlot({ traces }: { traces: RunTrace[] }) {
  // superseded behind, approved over them, the highlighted run on top
  const order = (t: RunTrace) => (t.highlight ? 2 : t.run.state === 'superseded' ? 0 : 1);
  const drawn = [...traces].sort((x, y) => order(x) - order(y));
  const hi = traces.find((t) => t.highlight);
  const n = traces.reduce((s, t) => s + t.points.length, 0);
  return (
    <Plot
      label={`DM against MJD: ${traces.length} runs, ${n} points${hi ? '; the active baseline highlighted' : ''}`}
      summary={
        hi
          ? 'Error bars (quoted 1σ) belong to the first highlighted run, and lines join the points of each active baseline; the other runs show values only.'
          : 'Error bars (quoted 1σ) belong to the newest approved run; the other runs show values only.'
      }
      deps={[traces]}
      make={() => {
        const withBars = hi ?? traces.find((t) => t.run.state === 'approved') ?? traces[0];
        const bars = withBars.points.filter((p) => p.err !== null) as (DmPoint & { err: number })[];
        return ObsPlot.plot({
          width: 1080,
          height: 360,
          marginLeft: 72,
          style: { fontSize: '11px', background: 'transparent', color: TOKEN.ink },
          x: { label: 'MJD', grid: true, tickFormat: 'd', inset: 8 },
          y: { label: dmAxisLabel(traces[0].dmKind), grid: true },
          marks: [
            ObsPlot.ruleX(bars, {
              x: 'mjd',
              y1: (d) => d.dm - d.err,
              y2: (d) => d.dm + d.err,
              stroke: withBars.colour,
              strokeOpacity: 0.5,
            }),
            // a connecting line through each active baseline (dashed for a second kind)
            ...traces
              .filter((t) => t.highlight)
              .map((t, k) =>
                ObsPlot.line(t.points, {
                  x: 'mjd',
                  y: 'dm',
                  stroke: t.colour,
                  strokeOpacity: 0.6,
                  strokeDasharray: k ? '5,3' : undefined,
                }),
              ),
            ...drawn.map((t) =>
              ObsPlot.dot(t.points, {
                x: 'mjd',
                y: 'dm',
                symbol: t.symbol,
                r: t.highlight ? 3.5 : 3,
                ...(t.filled && t.symbol !== 'plus' && t.symbol !== 'times'
                  ? { fill: t.colour }
                  : { stroke: t.colour, fill: 'none', strokeWidth: 1.2 }),
                tip: true,
                title: (d: DmPoint) =>
                  `${KIND_LABEL[t.run.kind]} · ${t.run.state} · ${dateTime(t.run.created_at)}\nMJD ${d.mjd.toFixed(3)}  DM ${d.dm.toFixed(6)}${d.err !== null ? ` ± ${d.err.toFixed(6)}` : ''}`,
              }),
            ),
          ],
        });
      }}
    />
  );
}

function Legend({ traces }: { traces: RunTrace[] }) {
  return (
    <ul aria-label="Runs in the plot" className="flex flex-col gap-1 text-xs">
      {traces.map((t) => (
        <li key={t.run.id} className="flex flex-wrap items-center gap-x-2">
          <Swatch symbol={t.symbol} colour={t.colour} filled={t.filled} line={t.highlight} />
          <Link
            to={`/runs/${t.run.id}`}
            className={`underline-offset-2 hover:underline ${t.highlight ? 'font-medium text-accent' : 'text-ink'}`}
          >
            {KIND_LABEL[t.run.kind] ?? t.run.kind} · {t.run.created_by.name} ·{' '}
            <span className="num">{dateTime(t.run.created_at)}</span>
          </Link>
          <StateBadge state={t.run.state} />
          {t.highlight && <span className="font-medium text-accent">active baseline</span>}
          <span className="num text-ink-soft">{t.points.length} points</span>
        </li>
      ))}
    </ul>
  );
}

/**
 * DM against MJD across the pulsar's latest approved and superseded DM runs (per visit and
 * series), one mark per run, the active baseline highlighted.
 */
export function DmHistory({ pulsar, baselines }: { pulsar: string; baselines: BaselineView[] }) {
  const runs = useRuns({
    pulsar,
    kind: 'dm-fit,dm-series',
    state: 'approved,superseded',
    page_size: HISTORY_RUNS,
  });
  const ids = runs.data?.items.map((r) => r.id) ?? [];
  const details = useRunDetails(ids);
  if (runs.isPending) return <Loading what="DM runs" />;
  if (runs.isError) return <ErrorNotice error={runs.error} />;
  if (!ids.length)
    return (
      <Empty>
        No approved DM runs of {pulsar} yet. When a lead approves a DM per visit or DM series run,
        its values appear here;{' '}
        <Link
          to={`/runs?pulsar=${encodeURIComponent(pulsar)}&state=in_review`}
          className="text-accent underline underline-offset-2"
        >
          runs waiting for review
        </Link>
        .
      </Empty>
    );
  if (details.errors.length) return <ErrorNotice error={details.errors[0]} />;
  if (details.isPending) return <Loading what={`the results of ${ids.length} runs`} />;

  const active = new Set(
    baselines.filter((b) => b.state === 'active' && b.pulsar === pulsar).map((b) => b.run_id),
  );
  const byId = new Map(details.data.map((d) => [d.id, d]));
  const traces: RunTrace[] = [];
  ids.forEach((id, i) => {
    const run = byId.get(id);
    const s = run && dmSeriesOf(run.result, pulsar);
    if (!run || !s || !s.points.length) return;
    const highlight = active.has(id);
    traces.push({
      run,
      points: s.points,
      dmKind: s.dmKind,
      highlight,
      ...traceStyle(run, i, highlight),
    });
  });
  if (!traces.length)
    return <Empty>The approved DM runs of {pulsar} hold no fitted values to draw.</Empty>;
  // absolute DMs and offsets cannot share an axis: one plot for each
  const groups = (['offset', 'absolute', 'mixed'] as const)
    .map((k) => traces.filter((t) => t.dmKind === k))
    .filter((g) => g.length);
  const total = runs.data.total;
  return (
    <div className="flex flex-col gap-4">
      <p className="text-xs text-ink-soft">
        The latest {traces.length} of {total} approved and superseded DM runs
        {total > HISTORY_RUNS ? ` (older ones are left out)` : ''}. Each run has its own symbol; the
        active baseline is in the accent colour, superseded runs are hollow and faded.
      </p>
      {groups.map((g) => (
        <div key={g[0].dmKind} className="flex flex-col gap-2">
          {groups.length > 1 && (
            <h3 className="text-sm font-medium">
              {g[0].dmKind === 'offset' ? 'DM offsets (from timing residuals)' : 'Absolute DM'}
            </h3>
          )}
          <Legend traces={g} />
          <HistoryPlot traces={g} />
        </div>
      ))}
    </div>
  );
}
