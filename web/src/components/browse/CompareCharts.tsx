import type { CompareItem } from '../../../../shared/schemas/review';
import { ObsPlot, Plot } from '../plots/Plot';
import { dmAxisLabel, TOKEN, type DmSeriesOfRun, type TauOfRun } from './series';
import { Swatch } from './Swatch';

/** Run A is ink with filled circles, run B accent with hollow triangles, in every compare plot. */
export const STYLE_A = { colour: TOKEN.ink, symbol: 'circle', filled: true } as const;
export const STYLE_B = { colour: TOKEN.accent, symbol: 'triangle', filled: false } as const;

const WIDTH = 1080;
const plotStyle = { fontSize: '11px', background: 'transparent', color: TOKEN.ink };
/** nudge A left and B right (pixels) so marks at the same epoch stay visible */
const NUDGE = 2.5;
/** the look of each run's dots (of radius r), smoothed series or power laws */
const dotA = (r: number) => ({ symbol: STYLE_A.symbol, fill: STYLE_A.colour, dx: -NUDGE, r });
const dotB = (r: number) => ({
  symbol: STYLE_B.symbol,
  stroke: STYLE_B.colour,
  strokeWidth: 1.3,
  fill: 'none',
  dx: NUDGE,
  r,
});
const LINE_A = { stroke: STYLE_A.colour, strokeWidth: 1.2 };
const LINE_B = { stroke: STYLE_B.colour, strokeWidth: 1.2, strokeDasharray: '5,3' };
const MJD_AXIS = { label: 'MJD', grid: true, tickFormat: 'd', inset: 8 } as const;
const FREQ_AXIS = { type: 'log', label: 'Frequency (MHz)', grid: true, inset: 12 } as const;

export function AbLegend({
  aLabel,
  bLabel,
  line,
}: {
  aLabel: string;
  bLabel: string;
  line?: boolean;
}) {
  return (
    <ul className="flex flex-wrap gap-x-6 gap-y-1 text-xs" aria-label="Legend">
      {(
        [
          ['A', STYLE_A, aLabel],
          ['B', STYLE_B, bLabel],
        ] as const
      ).map(([run, style, text]) => (
        <li key={run} className="flex items-center gap-1.5">
          <Swatch symbol={style.symbol} colour={style.colour} filled={style.filled} line={line} />
          <span>
            <span className="font-semibold">{run}</span> {text}
          </span>
        </li>
      ))}
    </ul>
  );
}

const withErr = <T extends { err: number | null }>(xs: T[]) =>
  xs.filter((p) => p.err !== null && Number.isFinite(p.err)) as (T & { err: number })[];

/** The DM series of both runs on one axis. */
export function DmOverlay({ a, b }: { a: DmSeriesOfRun; b: DmSeriesOfRun }) {
  const label = dmAxisLabel(a.dmKind === b.dmKind ? a.dmKind : 'mixed');
  return (
    <Plot
      label={`DM against MJD for run A (${a.points.length} points) and run B (${b.points.length} points)`}
      summary="Error bars are each run’s quoted 1σ; A is nudged left and B right so marks at the same visit stay apart. Lines are the smoothed series where a run has one."
      deps={[a, b]}
      make={() =>
        ObsPlot.plot({
          width: WIDTH,
          height: 320,
          marginLeft: 72,
          style: plotStyle,
          x: MJD_AXIS,
          y: { label, grid: true },
          marks: [
            ObsPlot.ruleX(withErr(a.points), {
              x: 'mjd',
              y1: (d) => d.dm - d.err,
              y2: (d) => d.dm + d.err,
              stroke: STYLE_A.colour,
              strokeOpacity: 0.45,
              dx: -NUDGE,
            }),
            ObsPlot.ruleX(withErr(b.points), {
              x: 'mjd',
              y1: (d) => d.dm - d.err,
              y2: (d) => d.dm + d.err,
              stroke: STYLE_B.colour,
              strokeOpacity: 0.55,
              dx: NUDGE,
            }),
            ObsPlot.line(a.smooth, { x: 'mjd', y: 'dm', ...LINE_A }),
            ObsPlot.line(b.smooth, { x: 'mjd', y: 'dm', ...LINE_B }),
            ObsPlot.dot(a.points, {
              x: 'mjd',
              y: 'dm',
              ...dotA(2.5),
              tip: true,
              title: (d) =>
                `A · MJD ${d.mjd.toFixed(3)}\nDM ${d.dm.toFixed(6)} ± ${d.err?.toFixed(6) ?? '—'}`,
            }),
            ObsPlot.dot(b.points, {
              x: 'mjd',
              y: 'dm',
              ...dotB(3.5),
              tip: true,
              title: (d) =>
                `B · MJD ${d.mjd.toFixed(3)}\nDM ${d.dm.toFixed(6)} ± ${d.err?.toFixed(6) ?? '—'}`,
            }),
          ],
        })
      }
    />
  );
}

/** τ against frequency, log–log, for both runs; power laws as lines, upper limits as arrows. */
export function TauOverlay({ a, b }: { a: TauOfRun; b: TauOfRun }) {
  const lowEnd = (d: { tau: number; err: number }) => Math.max(d.tau - d.err, d.tau * 0.05);
  const fitted = (t: TauOfRun) => t.bands.filter((p) => !p.limit);
  const limits = (t: TauOfRun) => t.bands.filter((p) => p.limit);
  return (
    <Plot
      label={`Scattering time τ against frequency for run A and run B, log–log`}
      summary="Error bars are each run’s quoted 1σ; arrows are 2σ upper limits; lines are the fitted τ(ν) power laws (solid A, dashed B)."
      deps={[a, b]}
      make={() =>
        ObsPlot.plot({
          width: WIDTH,
          height: 340,
          marginLeft: 60,
          style: plotStyle,
          x: FREQ_AXIS,
          y: { type: 'log', label: 'τ (µs)', grid: true },
          marks: [
            ObsPlot.line(a.law, { x: 'freq', y: 'tau', ...LINE_A }),
            ObsPlot.line(b.law, { x: 'freq', y: 'tau', ...LINE_B }),
            ObsPlot.ruleX(withErr(fitted(a)), {
              x: 'freq',
              y1: lowEnd,
              y2: (d) => d.tau + d.err,
              stroke: STYLE_A.colour,
              strokeOpacity: 0.5,
              dx: -NUDGE,
            }),
            ObsPlot.ruleX(withErr(fitted(b)), {
              x: 'freq',
              y1: lowEnd,
              y2: (d) => d.tau + d.err,
              stroke: STYLE_B.colour,
              strokeOpacity: 0.6,
              dx: NUDGE,
            }),
            ObsPlot.arrow(limits(a), {
              x: 'freq',
              y1: 'tau',
              y2: (d) => d.tau / 1.8,
              stroke: STYLE_A.colour,
              headLength: 5,
              dx: -NUDGE,
            }),
            ObsPlot.arrow(limits(b), {
              x: 'freq',
              y1: 'tau',
              y2: (d) => d.tau / 1.8,
              stroke: STYLE_B.colour,
              headLength: 5,
              dx: NUDGE,
            }),
            ObsPlot.dot(fitted(a), {
              x: 'freq',
              y: 'tau',
              ...dotA(3),
              tip: true,
              title: (d) =>
                `A · ${d.freq} MHz\nτ ${d.tau.toPrecision(4)} ± ${d.err?.toPrecision(2) ?? '—'} µs`,
            }),
            ObsPlot.dot(fitted(b), {
              x: 'freq',
              y: 'tau',
              ...dotB(4),
              tip: true,
              title: (d) =>
                `B · ${d.freq} MHz\nτ ${d.tau.toPrecision(4)} ± ${d.err?.toPrecision(2) ?? '—'} µs`,
            }),
          ],
        })
      }
    />
  );
}

const GUIDES = [-3, -1, 1, 3];

/** Per-item z = Δ/σ against MJD (visits) or frequency (bands), with ±1σ and ±3σ guides. */
export function ZPlot({ items, by }: { items: CompareItem[]; by: 'mjd' | 'freq' }) {
  const pts = items
    .filter((i) => i.z !== null && (by === 'mjd' ? i.mjd !== undefined : i.freq_mhz !== undefined))
    .map((i) => ({
      x: (by === 'mjd' ? i.mjd : i.freq_mhz) as number,
      z: i.z as number,
      key: i.key,
      quantity: i.quantity,
    }));
  const maxAbs = pts.reduce((m, p) => Math.max(m, Math.abs(p.z)), 0);
  const lim = Math.max(3.6, maxAbs * 1.08);
  const over = pts.filter((p) => Math.abs(p.z) > 3);
  const under = pts.filter((p) => Math.abs(p.z) <= 3);
  const title = (p: (typeof pts)[number]) =>
    `${p.key}\n${p.quantity === 'dm' ? 'DM' : p.quantity}: z = ${p.z.toFixed(2)}`;
  return (
    <Plot
      label={`z = Δ/σ for ${pts.length} compared ${by === 'mjd' ? 'visits' : 'bands'}; ${over.length} beyond 3σ`}
      summary="Dotted lines at ±1σ, dashed red lines at ±3σ; points beyond 3σ are drawn in red and larger."
      deps={[items, by]}
      make={() =>
        ObsPlot.plot({
          width: WIDTH,
          height: 220,
          marginLeft: 72,
          marginRight: 40,
          style: plotStyle,
          x: by === 'mjd' ? MJD_AXIS : FREQ_AXIS,
          y: { label: 'z = Δ/σ', domain: [-lim, lim] },
          marks: [
            ObsPlot.ruleY([0], { stroke: TOKEN.inkSoft }),
            ObsPlot.ruleY([-1, 1], { stroke: TOKEN.edge, strokeDasharray: '2,3' }),
            ObsPlot.ruleY([-3, 3], {
              stroke: TOKEN.alert,
              strokeDasharray: '6,3',
              strokeOpacity: 0.8,
            }),
            ObsPlot.text(GUIDES, {
              y: (d) => d,
              frameAnchor: 'right',
              textAnchor: 'start',
              dx: 4,
              text: (d) => `${d > 0 ? '+' : '−'}${Math.abs(d)}σ`,
              fill: (d) => (Math.abs(d) === 3 ? TOKEN.alert : TOKEN.inkSoft),
            }),
            ObsPlot.ruleX(pts, { x: 'x', y1: 0, y2: 'z', stroke: TOKEN.edge, strokeOpacity: 0.6 }),
            ObsPlot.dot(under, { x: 'x', y: 'z', r: 2.5, fill: TOKEN.ink, tip: true, title }),
            ObsPlot.dot(over, {
              x: 'x',
              y: 'z',
              r: 4,
              fill: TOKEN.alert,
              symbol: 'diamond',
              tip: true,
              title,
            }),
          ],
        })
      }
    />
  );
}
