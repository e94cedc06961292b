import { interpolateMagma, interpolatePuOr } from 'd3-scale-chromatic';
import { useId, useState, type ReactNode } from 'react';
import type { ScintResult } from '../../../../shared/schemas/scint';
import { sig } from '../../lib/format';
import { ACCENT, INK } from '../plots/colour';
import { ObsPlot, Plot } from '../plots/Plot';
import { PLOT_STYLE, PLOT_WIDTH } from './RunPlot';

/** Tokens of styles.css that the pictures draw with (the plot library needs literal colours). */
const PANEL = '#ffffff';
const EDGE = '#868b93';

/**
 * Intensity and power: magma (perceptual, dark to light), stopped short of its palest end so that
 * the brightest pixels stay apart from the page and from the hatching of flagged blocks. Viridis
 * is the app's frequency map and never colours an intensity.
 */
const MAGMA_FROM = 0.02;
const MAGMA_TO = 0.93;
export const intensityColour = (t: number) =>
  interpolateMagma(MAGMA_FROM + (MAGMA_TO - MAGMA_FROM) * Math.min(1, Math.max(0, t)));

/** A value → colour map with its domain, for a heatmap and its legend alike. */
export interface ColourMap {
  domain: [number, number];
  colour: (v: number) => string;
  label: string;
}

/** Intensity or power from lo (dark) to hi (light), clamped. */
export function intensityMap(lo: number, hi: number, label: string): ColourMap {
  const span = hi > lo ? hi - lo : 1;
  return { domain: [lo, hi], colour: (v) => intensityColour((v - lo) / span), label };
}

/** A signed quantity around zero: purple below, orange above (d3's PuOr), ±reach at the ends. */
export function signedMap(reach: number, label: string): ColourMap {
  const r = reach > 0 ? reach : 1;
  return {
    domain: [-r, r],
    colour: (v) => interpolatePuOr(0.5 + 0.5 * Math.min(1, Math.max(-1, v / r))),
    label,
  };
}

/**
 * The colour legend as a small plot of its own (a bar of slices with the plot library's axis),
 * drawn without a canvas so that it renders wherever the heatmap does.
 */
function legendPlot(map: ColourMap, width = 280): HTMLElement {
  const [lo, hi] = map.domain;
  const n = 64;
  const slices = Array.from({ length: n }, (_, i) => ({
    x1: lo + ((hi - lo) * i) / n,
    x2: lo + ((hi - lo) * (i + 1)) / n,
  }));
  const bar = ObsPlot.plot({
    width,
    height: 34,
    marginTop: 2,
    marginBottom: 20,
    marginLeft: 12,
    marginRight: 12,
    style: PLOT_STYLE,
    x: { domain: [lo, hi], label: null, ticks: 3, tickFormat: plainTick },
    y: { axis: null, domain: [0, 1] },
    color: { type: 'identity' },
    marks: [
      ObsPlot.rect(slices, {
        x1: 'x1',
        x2: 'x2',
        y1: 0,
        y2: 1,
        fill: (d: { x1: number; x2: number }) => map.colour((d.x1 + d.x2) / 2),
        shapeRendering: 'crispEdges',
      }),
    ],
  });
  const box = document.createElement('div');
  box.className = 'flex flex-col text-xs';
  const label = document.createElement('span');
  label.textContent = map.label;
  label.style.marginLeft = '12px';
  box.append(label, bar);
  return box;
}

/** A heatmap plot with its colour legend above it, as one element for Plot. */
function withLegend(map: ColourMap, plot: ReturnType<typeof ObsPlot.plot>) {
  const box = document.createElement('div');
  box.className = 'flex flex-col gap-1';
  const legend = legendPlot(map);
  legend.dataset.part = 'legend';
  plot.setAttribute('data-part', 'heatmap');
  box.append(legend, plot);
  return box as unknown as ReturnType<typeof ObsPlot.plot>;
}

/** Axis figures as written: no thousands separators, a true minus sign. */
export const plainTick = (d: number) => String(Number(d.toPrecision(6))).replace(/-/g, '−');

/** Heatmap figures are as wide as the results column; the ACF's small plots take half of it. */
const HALF_WIDTH = (PLOT_WIDTH - 16) / 2;
const HEAT_MARGINS = { marginLeft: 64, marginRight: 16, marginBottom: 40 };

export interface Cell {
  x1: number;
  x2: number;
  y1: number;
  y2: number;
  v: number;
  row: number;
  col: number;
}

/**
 * Edges of the n blocks of a picture axis whose first and last block centres (or samples, when
 * the picture is not downsampled) are `range`. With the native sample `step`, blocks of a
 * downsampled axis span whole samples (the last one may be short); without it, blocks are even.
 */
export function blockEdges(range: [number, number], n: number, step?: number): number[] {
  const [a, b] = range;
  if (step === undefined || !(step > 0)) {
    const w = n > 1 ? (b - a) / (n - 1) : Math.abs(b - a) || 1;
    return Array.from({ length: n + 1 }, (_, k) => a - w / 2 + k * w);
  }
  const s = (b < a ? -1 : 1) * step;
  const samples = Math.round((b - a) / s) + 1;
  const per = Math.max(1, Math.ceil(samples / n));
  const lo = a - s / 2;
  const hi = b + s / 2;
  return Array.from({ length: n + 1 }, (_, k) => (k === n ? hi : lo + k * per * s));
}

/** Row-major values (rows along y) as rectangles; null and non-finite values are left out. */
export function gridCells(
  values: (number | null)[],
  rows: number,
  cols: number,
  yEdges: number[],
  xEdges: number[],
): Cell[] {
  const out: Cell[] = [];
  for (let r = 0; r < rows; r++)
    for (let c = 0; c < cols; c++) {
      const v = values[r * cols + c];
      if (v === null || v === undefined || !Number.isFinite(v)) continue;
      out.push({
        x1: xEdges[c],
        x2: xEdges[c + 1],
        y1: yEdges[r],
        y2: yEdges[r + 1],
        v,
        row: r,
        col: c,
      });
    }
  return out;
}

/** The p-quantile of the finite values (nearest rank). */
export function quantile(values: number[], p: number): number {
  const s = values.filter(Number.isFinite).sort((x, y) => x - y);
  if (!s.length) return NaN;
  return s[Math.min(s.length - 1, Math.max(0, Math.floor(p * s.length)))];
}

/**
 * Blocks at least half flagged, merged into rectangles: runs along time in each frequency row,
 * then equal runs of neighbouring rows joined, so a flagged channel is one rectangle.
 */
export function flaggedRects(
  flagged: number[],
  rows: number,
  cols: number,
  yEdges: number[],
  xEdges: number[],
): { x1: number; x2: number; y1: number; y2: number }[] {
  const runs: { r0: number; r1: number; c0: number; c1: number }[] = [];
  let open = new Map<string, { r0: number; r1: number; c0: number; c1: number }>();
  for (let r = 0; r < rows; r++) {
    const next = new Map<string, { r0: number; r1: number; c0: number; c1: number }>();
    let c = 0;
    while (c < cols) {
      if (!(flagged[r * cols + c] >= 0.5)) {
        c++;
        continue;
      }
      let e = c;
      while (e + 1 < cols && flagged[r * cols + e + 1] >= 0.5) e++;
      const key = `${c}-${e}`;
      const above = open.get(key);
      if (above) {
        above.r1 = r;
        next.set(key, above);
      } else {
        const run = { r0: r, r1: r, c0: c, c1: e };
        runs.push(run);
        next.set(key, run);
      }
      c = e + 1;
    }
    open = next;
  }
  return runs.map((u) => ({
    x1: xEdges[u.c0],
    x2: xEdges[u.c1 + 1],
    y1: yEdges[u.r0],
    y2: yEdges[u.r1 + 1],
  }));
}

/** A heatmap's cells as rectangles coloured by the map (rect: raster needs a canvas). */
function heatCells(cells: Cell[], map: ColourMap) {
  return ObsPlot.rect(cells, {
    x1: 'x1',
    x2: 'x2',
    y1: 'y1',
    y2: 'y2',
    fill: (c: Cell) => map.colour(c.v),
    shapeRendering: 'crispEdges',
  });
}

const sorted = (e: number[]): [number, number] => [
  Math.min(e[0], e[e.length - 1]),
  Math.max(e[0], e[e.length - 1]),
];

/** An SVG pattern of light stripes on grey: a fill no colour of the intensity map takes. */
function hatchPattern(id: string): SVGDefsElement {
  const ns = 'http://www.w3.org/2000/svg';
  const el = <K extends keyof SVGElementTagNameMap>(name: K, attrs: Record<string, string>) => {
    const node = document.createElementNS(ns, name);
    for (const [k, v] of Object.entries(attrs)) node.setAttribute(k, v);
    return node;
  };
  const defs = el('defs', {});
  const pattern = el('pattern', {
    id,
    patternUnits: 'userSpaceOnUse',
    width: '6',
    height: '6',
    patternTransform: 'rotate(45)',
  });
  pattern.append(
    el('rect', { width: '6', height: '6', fill: EDGE }),
    el('line', { x1: '1.5', y1: '0', x2: '1.5', y2: '6', stroke: PANEL, 'stroke-width': '2.5' }),
  );
  defs.append(pattern);
  return defs;
}

/** The legend entry of flagged blocks: the same hatching as in the picture. */
function FlagSwatch() {
  const id = `${useId().replace(/[^\w-]/g, '')}-swatch`;
  return (
    <svg width="22" height="14" aria-hidden="true" className="inline-block shrink-0 align-middle">
      <defs>
        <pattern
          id={id}
          patternUnits="userSpaceOnUse"
          width="6"
          height="6"
          patternTransform="rotate(45)"
        >
          <rect width="6" height="6" fill={EDGE} />
          <line x1="1.5" y1="0" x2="1.5" y2="6" stroke={PANEL} strokeWidth="2.5" />
        </pattern>
      </defs>
      <rect x="0.5" y="0.5" width="21" height="13" fill={`url(#${id})`} stroke={INK} />
    </svg>
  );
}

/** One of the run's three pictures: a named figure with a heading and a caption in words. */
function ScintFigure({
  title,
  caption,
  children,
  aside,
}: {
  title: string;
  caption: ReactNode;
  children: ReactNode;
  aside?: ReactNode;
}) {
  const headingId = useId();
  return (
    <figure aria-labelledby={headingId} className="flex flex-col gap-2">
      <div className="flex flex-wrap items-baseline justify-between gap-x-4 gap-y-1">
        <h3 id={headingId} className="text-sm font-medium">
          {title}
        </h3>
        {aside}
      </div>
      {children}
      <figcaption className="text-xs text-ink-soft">{caption}</figcaption>
    </figure>
  );
}

const pct = (f: number) => `${sig(100 * f, 3)} %`;

/** (a) The dynamic spectrum: time across, frequency up, flagged blocks hatched on top. */
export function DynamicSpectrumFigure({ result }: { result: ScintResult }) {
  const d = result.pictures.dynspec;
  const [showFlags, setShowFlags] = useState(true);
  const toggleId = useId();
  const patternId = `${useId().replace(/[^\w-]/g, '')}-flag`;
  const yEdges = blockEdges(d.freq_mhz, d.n_freq, result.channel_mhz);
  const xEdges = blockEdges(d.time_s, d.n_time, result.subint_s);
  const cells = gridCells(d.values, d.n_freq, d.n_time, yEdges, xEdges);
  const flags = flaggedRects(d.flagged, d.n_freq, d.n_time, yEdges, xEdges);
  // the colour range from the unflagged blocks: the filled-in ones are interpolations
  const clean = cells.filter((c) => !(d.flagged[c.row * d.n_time + c.col] >= 0.5)).map((c) => c.v);
  const map = intensityMap(
    quantile(clean, 0.01),
    quantile(clean, 0.995),
    'Intensity (arbitrary units)',
  );
  const flaggedBlocks = d.flagged.filter((f) => f >= 0.5).length;
  const downsampled = d.n_freq < result.nchan || d.n_time < result.nsub;
  const caption = `Intensity against time and frequency, ${d.n_time} × ${d.n_freq} blocks${
    downsampled
      ? ` (block means of ${result.nsub} sub-integrations × ${result.nchan} channels)`
      : ''
  }, coloured from dark (faint) to light (bright) between the 1st and 99.5th percentiles of the unflagged blocks. ${
    flaggedBlocks
      ? `${flaggedBlocks} block${flaggedBlocks === 1 ? '' : 's'} at least half flagged as interference (${pct(result.rfi.flagged_fraction)} of all pixels) ${showFlags ? 'are hatched' : 'are shown filled by interpolation in frequency'}.`
      : 'No block is flagged.'
  } ${
    result.status === 'measured'
      ? 'Scintles are the bright patches; their width in frequency and length in time are Δν_d and Δt_d.'
      : 'No scintle structure is resolved across channels.'
  }`;
  return (
    <ScintFigure
      title="Dynamic spectrum"
      caption={caption}
      aside={
        flaggedBlocks > 0 && (
          <label htmlFor={toggleId} className="flex items-center gap-1.5 text-xs">
            <input
              id={toggleId}
              type="checkbox"
              checked={showFlags}
              onChange={(e) => setShowFlags(e.target.checked)}
            />
            <FlagSwatch />
            Hatch flagged blocks (interference)
          </label>
        )
      }
    >
      <Plot
        label="Dynamic spectrum: intensity against time and frequency"
        deps={[result, showFlags]}
        make={() =>
          withLegend(
            map,
            ObsPlot.plot({
              width: PLOT_WIDTH,
              height: 380,
              ...HEAT_MARGINS,
              style: PLOT_STYLE,
              x: { label: 'Time (s)', domain: sorted(xEdges), tickFormat: plainTick },
              y: { label: 'Frequency (MHz)', domain: sorted(yEdges), tickFormat: plainTick },
              color: { type: 'identity' },
              marks: [
                heatCells(cells, map),
                ...(showFlags && flags.length
                  ? [
                      () => hatchPattern(patternId),
                      ObsPlot.rect(flags, {
                        x1: 'x1',
                        x2: 'x2',
                        y1: 'y1',
                        y2: 'y2',
                        fill: `url(#${patternId})`,
                        stroke: INK,
                        strokeWidth: 0.75,
                      }),
                    ]
                  : []),
                ObsPlot.frame({ stroke: INK, strokeOpacity: 0.4 }),
                ObsPlot.tip(
                  cells,
                  ObsPlot.pointer({
                    x: (c: Cell) => (c.x1 + c.x2) / 2,
                    y: (c: Cell) => (c.y1 + c.y2) / 2,
                    title: (c: Cell) => {
                      const f = d.flagged[c.row * d.n_time + c.col];
                      return `t ${plainTick((c.x1 + c.x2) / 2)} s\nν ${plainTick((c.y1 + c.y2) / 2)} MHz\nintensity ${sig(c.v, 3)}${f > 0 ? `\n${pct(f)} flagged, filled by interpolation` : ''}`;
                    },
                  }),
                ),
              ],
            }),
          )
        }
      />
    </ScintFigure>
  );
}

/** Least-squares A and c of model = A·g(lag) + c, from the model's own samples. */
export function shapeLevels(lags: number[], model: number[], g: (lag: number) => number) {
  const n = lags.length;
  if (n < 2) return null;
  let sg = 0,
    sgg = 0,
    sm = 0,
    sgm = 0;
  for (let i = 0; i < n; i++) {
    const x = g(lags[i]);
    sg += x;
    sgg += x * x;
    sm += model[i];
    sgm += x * model[i];
  }
  const det = n * sgg - sg * sg;
  if (!(Math.abs(det) > 1e-12)) return null;
  const a = (n * sgm - sg * sm) / det;
  return { a, c: (sm - a * sg) / n };
}

interface CutPoint {
  lag: number;
  acf: number;
  model: number;
}

/** One cut of the ACF: the points, the fitted model, and the fitted width marked. */
function CutPlot({
  label,
  points,
  width,
  widthName,
  shape,
  level,
  levelShort,
  unit,
  axis,
}: {
  label: string;
  points: CutPoint[];
  /** the fitted width, or null when the cut was not fitted */
  width: number | null;
  widthName: string;
  shape: (lag: number, width: number) => number;
  /** where the width is read: ½ of the maximum (frequency), 1/e (time) */
  level: number;
  /** how the width is read, short, for the label in the plot */
  levelShort: string;
  unit: string;
  axis: string;
}) {
  const w = width;
  const fit =
    w === null
      ? null
      : shapeLevels(
          points.map((p) => p.lag),
          points.map((p) => p.model),
          (l) => shape(l, w),
        );
  const at = fit && w !== null ? fit.a * level + fit.c : null;
  const maxLag = Math.max(...points.map((p) => p.lag), w ?? 0);
  return (
    <Plot
      label={label}
      deps={[points, width]}
      make={() =>
        ObsPlot.plot({
          width: HALF_WIDTH,
          height: 230,
          marginLeft: 52,
          marginRight: 12,
          style: PLOT_STYLE,
          grid: true,
          x: { label: axis, domain: [0, maxLag * 1.04], tickFormat: plainTick },
          y: { label: 'ACF', nice: true, tickFormat: plainTick },
          marks: [
            ObsPlot.ruleY([0], { stroke: INK, strokeOpacity: 0.35 }),
            w !== null
              ? ObsPlot.line(points, { x: 'lag', y: 'model', stroke: ACCENT, strokeWidth: 1.75 })
              : null,
            ObsPlot.dot(points, { x: 'lag', y: 'acf', r: 2.5, fill: INK }),
            w !== null && fit && at !== null
              ? [
                  ObsPlot.ruleX([w], {
                    y1: fit.c,
                    y2: at,
                    stroke: ACCENT,
                    strokeDasharray: '3,3',
                  }),
                  ObsPlot.link([{ x1: 0, x2: w, y: at }], {
                    x1: 'x1',
                    x2: 'x2',
                    y1: 'y',
                    y2: 'y',
                    stroke: ACCENT,
                    strokeWidth: 1.5,
                    markerStart: 'tick-x',
                    markerEnd: 'tick-x',
                  }),
                  ObsPlot.text([{ x: w, y: at }], {
                    x: 'x',
                    y: 'y',
                    text: () => `${widthName} = ${sig(w, 3)} ${unit} (${levelShort})`,
                    dx: 6,
                    dy: -8,
                    textAnchor: 'start',
                    fill: INK,
                    stroke: PANEL,
                    strokeWidth: 3,
                    paintOrder: 'stroke',
                  }),
                ]
              : null,
            ObsPlot.tip(
              points,
              ObsPlot.pointerX({
                x: 'lag',
                y: 'acf',
                title: (p: CutPoint) =>
                  `lag ${sig(p.lag, 4)} ${unit}\nACF ${sig(p.acf, 3)}${w !== null ? `\nmodel ${sig(p.model, 3)}` : ''}`,
              }),
            ),
          ],
        })
      }
    />
  );
}

/** (b) The ACF: its frequency and time cuts with the fitted widths, and its centre. */
export function AcfFigure({ result }: { result: ScintResult }) {
  const a = result.pictures.acf;
  const p = a.patch;
  const dnu = result.dnu_d_mhz;
  const dt = result.dt_d_s;
  const freqPoints = a.freq_cut.map((x) => ({ lag: x.lag_mhz, acf: x.acf, model: x.model }));
  const timePoints = a.time_cut.map((x) => ({ lag: x.lag_s, acf: x.acf, model: x.model }));
  const yEdges = blockEdges(p.freq_lag_mhz, p.n_freq_lag, result.channel_mhz);
  const xEdges = blockEdges(p.time_lag_s, p.n_time_lag, result.subint_s);
  const cells = gridCells(p.values, p.n_freq_lag, p.n_time_lag, yEdges, xEdges);
  const map = signedMap(
    quantile(
      cells.map((c) => Math.abs(c.v)),
      0.99,
    ),
    'ACF',
  );
  const ellipse =
    dnu !== null && dt !== null
      ? Array.from({ length: 73 }, (_, i) => {
          const t = (2 * Math.PI * i) / 72;
          return { x: dt * Math.cos(t), y: dnu * Math.sin(t) };
        })
      : [];
  const caption = [
    'Autocorrelation of the dynamic spectrum, zero lag left out of the cuts (it carries the noise).',
    dnu !== null
      ? `Frequency cut: points the ACF, line the fitted A/(1 + (δν/Δν_d)²) + c; Δν_d = ${sig(dnu, 3)} MHz is its half width at half maximum (the bar).`
      : 'Frequency cut: not fitted, only the ACF is drawn.',
    dt !== null
      ? `Time cut: line the fitted A·exp(−(δt/Δt_d)²) + c; Δt_d = ${sig(dt, 3)} s is its half width at 1/e (the bar).`
      : 'Time cut: not fitted, only the ACF is drawn.',
    `Centre of the 2-D ACF in a purple–orange map around zero (positive orange, negative purple)${ellipse.length ? ', the dashed ellipse spanning ±Δt_d and ±Δν_d' : ''}.`,
  ].join(' ');
  return (
    <ScintFigure title="Autocorrelation" caption={caption}>
      <div className="grid grid-cols-1 gap-4 md:grid-cols-2">
        <CutPlot
          label="Frequency cut of the ACF"
          points={freqPoints}
          width={dnu}
          widthName="Δν_d"
          shape={(l, w) => 1 / (1 + (l / w) ** 2)}
          level={0.5}
          levelShort="HWHM"
          unit="MHz"
          axis="Frequency lag δν (MHz)"
        />
        <CutPlot
          label="Time cut of the ACF"
          points={timePoints}
          width={dt}
          widthName="Δt_d"
          shape={(l, w) => Math.exp(-((l / w) ** 2))}
          level={1 / Math.E}
          levelShort="1/e"
          unit="s"
          axis="Time lag δt (s)"
        />
        <Plot
          label="Centre of the 2-D ACF against time lag and frequency lag"
          deps={[result]}
          make={() =>
            withLegend(
              map,
              ObsPlot.plot({
                width: HALF_WIDTH,
                height: 300,
                marginLeft: 52,
                marginRight: 12,
                marginBottom: 40,
                style: PLOT_STYLE,
                x: { label: 'Time lag δt (s)', domain: sorted(xEdges), tickFormat: plainTick },
                y: {
                  label: 'Frequency lag δν (MHz)',
                  domain: sorted(yEdges),
                  tickFormat: plainTick,
                },
                color: { type: 'identity' },
                marks: [
                  heatCells(cells, map),
                  ellipse.length
                    ? ObsPlot.line(ellipse, {
                        x: 'x',
                        y: 'y',
                        stroke: INK,
                        strokeWidth: 1.25,
                        strokeDasharray: '4,3',
                      })
                    : null,
                  ObsPlot.frame({ stroke: INK, strokeOpacity: 0.4 }),
                  ObsPlot.tip(
                    cells,
                    ObsPlot.pointer({
                      x: (c: Cell) => (c.x1 + c.x2) / 2,
                      y: (c: Cell) => (c.y1 + c.y2) / 2,
                      title: (c: Cell) =>
                        `δt ${sig((c.x1 + c.x2) / 2, 3)} s\nδν ${sig((c.y1 + c.y2) / 2, 3)} MHz\nACF ${sig(c.v, 3)}`,
                    }),
                  ),
                ],
              }),
            )
          }
        />
        <AcfNumbers result={result} />
      </div>
    </ScintFigure>
  );
}

/** Beside the ACF's centre: the widths it gave, in words and numbers. */
function AcfNumbers({ result }: { result: ScintResult }) {
  const models = (result.parameters?.acf_models ?? null) as Record<string, string> | null;
  const row = (term: ReactNode, value: ReactNode) => (
    <div className="grid grid-cols-[7rem_1fr] gap-x-2 py-0.5">
      <dt className="text-ink-soft">{term}</dt>
      <dd className="min-w-0">{value}</dd>
    </div>
  );
  return (
    <dl className="self-start text-xs">
      {row(
        'Δν_d',
        result.dnu_d_mhz !== null ? (
          <span className="num">
            {sig(result.dnu_d_mhz, 3)} ± {sig(result.dnu_d_err_mhz, 2)} MHz
          </span>
        ) : result.dnu_d_upper_mhz !== null ? (
          <span className="num">&lt; {sig(result.dnu_d_upper_mhz, 3)} MHz</span>
        ) : (
          '—'
        ),
      )}
      {row(
        'Δt_d',
        result.dt_d_s !== null ? (
          <span className="num">
            {sig(result.dt_d_s, 3)} ± {sig(result.dt_d_err_s, 2)} s
          </span>
        ) : (
          '—'
        ),
      )}
      {row(
        'Lag steps',
        <span className="num">
          {Number(result.channel_mhz.toPrecision(6))} MHz · {Number(result.subint_s.toPrecision(6))}{' '}
          s
        </span>,
      )}
      {models?.frequency && row('Frequency model', <span className="num">{models.frequency}</span>)}
      {models?.time && row('Time model', <span className="num">{models.time}</span>)}
      {row('Errors', 'the fit’s error combined with the finite-scintle fraction 1/√N_s')}
    </dl>
  );
}

/** (c) The secondary spectrum: conjugate time across, delay up, power in dB, the fitted arc. */
export function SecondarySpectrumFigure({ result }: { result: ScintResult }) {
  const s = result.pictures.secondary;
  const arc = result.arc_curvature;
  const [showArc, setShowArc] = useState(true);
  const toggleId = useId();
  const yEdges = blockEdges(s.delay_us, s.n_delay);
  const xEdges = blockEdges(s.ft_mhz, s.n_ft);
  const cells = gridCells(s.db, s.n_delay, s.n_ft, yEdges, xEdges);
  const db = cells.map((c) => c.v);
  const map = intensityMap(quantile(db, 0.1), quantile(db, 0.999), 'Power (dB)');
  const line = arc && s.arc ? s.arc : [];
  const caption = `Power of the 2-D Fourier transform of the dynamic spectrum, in dB, against conjugate time f_t (mHz) and delay f_τ (µs); positive delays only (the rest mirrors them). Colours run from the 10th percentile (dark) to the 99.9th (light). ${
    arc && line.length
      ? `Dashed${showArc ? '' : ' (hidden now)'}: the fitted arc f_τ = η f_t² with η = ${sig(arc.eta_s3, 3)} s³ (µs/mHz²; ${sig(arc.eta_lo_s3, 3)}–${sig(arc.eta_hi_s3, 3)}), ${sig(arc.contrast_db, 2)} dB above the typical parabola. A best parabola is found even where there is no arc: judge it against the picture.`
      : 'No arc: no parabola was fitted to this spectrum.'
  }`;
  return (
    <ScintFigure
      title="Secondary spectrum"
      caption={caption}
      aside={
        arc && line.length ? (
          <label htmlFor={toggleId} className="flex items-center gap-1.5 text-xs">
            <input
              id={toggleId}
              type="checkbox"
              checked={showArc}
              onChange={(e) => setShowArc(e.target.checked)}
            />
            <svg width="24" height="10" aria-hidden="true" className="shrink-0">
              <line x1="1" y1="5" x2="23" y2="5" stroke={INK} strokeWidth="3.5" />
              <line
                x1="1"
                y1="5"
                x2="23"
                y2="5"
                stroke={PANEL}
                strokeWidth="1.5"
                strokeDasharray="5,3"
              />
            </svg>
            Fitted arc f_τ = η f_t², η = <span className="num">{sig(arc.eta_s3, 3)} s³</span>
          </label>
        ) : (
          <p className="text-xs text-ink-soft">No arc fitted</p>
        )
      }
    >
      <Plot
        label="Secondary spectrum: power against conjugate time and delay"
        deps={[result, showArc]}
        make={() =>
          withLegend(
            map,
            ObsPlot.plot({
              width: PLOT_WIDTH,
              height: 360,
              ...HEAT_MARGINS,
              style: PLOT_STYLE,
              x: {
                label: 'Conjugate time f_t (mHz)',
                domain: sorted(xEdges),
                tickFormat: plainTick,
              },
              y: { label: 'Delay f_τ (µs)', domain: sorted(yEdges), tickFormat: plainTick },
              color: { type: 'identity' },
              marks: [
                heatCells(cells, map),
                // the arc twice: a dark underlay and a light dashed line, visible on any colour
                showArc && line.length
                  ? [
                      ObsPlot.line(line, {
                        x: 'ft_mhz',
                        y: 'delay_us',
                        stroke: INK,
                        strokeWidth: 3.5,
                      }),
                      ObsPlot.line(line, {
                        x: 'ft_mhz',
                        y: 'delay_us',
                        stroke: PANEL,
                        strokeWidth: 1.5,
                        strokeDasharray: '5,3',
                      }),
                    ]
                  : null,
                ObsPlot.frame({ stroke: INK, strokeOpacity: 0.4 }),
                ObsPlot.tip(
                  cells,
                  ObsPlot.pointer({
                    x: (c: Cell) => (c.x1 + c.x2) / 2,
                    y: (c: Cell) => (c.y1 + c.y2) / 2,
                    title: (c: Cell) =>
                      `f_t ${sig((c.x1 + c.x2) / 2, 3)} mHz\nf_τ ${sig((c.y1 + c.y2) / 2, 3)} µs\n${sig(c.v, 3)} dB`,
                  }),
                ),
              ],
            }),
          )
        }
      />
    </ScintFigure>
  );
}
