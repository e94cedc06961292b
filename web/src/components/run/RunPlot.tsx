import { FREQ_DOMAIN_MHZ, freqColour } from '../plots/colour';
import { ObsPlot, Plot } from '../plots/Plot';

/**
 * The frequency colour scale for Observable Plot, built on colour.ts's freqColour so that the
 * legend and every mark use exactly the app's one frequency colour map.
 */
export const FREQ_COLOUR = {
  type: 'log' as const,
  domain: FREQ_DOMAIN_MHZ,
  interpolate: (t: number) =>
    freqColour(FREQ_DOMAIN_MHZ[0] * (FREQ_DOMAIN_MHZ[1] / FREQ_DOMAIN_MHZ[0]) ** t),
  clamp: true,
  label: 'Frequency (MHz)',
};

/** Shared look of the run page's plots: the app's fonts, labels free to reach past the frame. */
export const PLOT_STYLE = { fontFamily: 'inherit', fontSize: '11px', overflow: 'visible' };
export const MARGIN_LEFT = 64;

/** The frame every run-page plot shares: its size, the left margin that lines plots up, a grid. */
export const plotFrame = (width: number, height: number) => ({
  width,
  height,
  marginLeft: MARGIN_LEFT,
  style: PLOT_STYLE,
  grid: true,
});

/** Width the plots are drawn at: the results column on a wide screen; narrower screens scale the SVG down. */
export const PLOT_WIDTH = 760;

/** A Plot with a heading-like title above it and a one-line caption below. */
export function RunPlot({
  title,
  summary,
  make,
  deps,
}: {
  title: string;
  summary: string;
  make: (width: number) => ReturnType<typeof ObsPlot.plot>;
  deps: unknown[];
}) {
  return (
    <div className="flex flex-col gap-1">
      <h3 className="text-sm font-medium">{title}</h3>
      <Plot make={() => make(PLOT_WIDTH)} deps={deps} label={title} summary={summary} />
    </div>
  );
}
