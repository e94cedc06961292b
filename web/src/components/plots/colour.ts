import { interpolateViridis } from 'd3-scale-chromatic';

/**
 * Frequency → colour, the same in every plot (design.md): viridis over the whole span the demo
 * observatory's receivers cover (550–3400 MHz), on a logarithmic axis, low (dark) to high.
 */
export const FREQ_DOMAIN_MHZ: [number, number] = [550, 3400];

export function freqColour(freqMhz: number): string {
  const [lo, hi] = FREQ_DOMAIN_MHZ;
  const t = (Math.log(freqMhz) - Math.log(lo)) / (Math.log(hi) - Math.log(lo));
  // keep off the palest end so points stay visible on paper
  return interpolateViridis(0.9 * Math.min(1, Math.max(0, t)));
}

/** Observable Plot colour options for a frequency channel (the same mapping). */
export const freqColourScale = {
  type: 'log' as const,
  domain: FREQ_DOMAIN_MHZ,
  scheme: 'viridis' as const,
  label: 'Frequency (MHz)',
};

/** The app's ink and accent for plot marks. */
export const INK = '#18202b';
export const ACCENT = '#0b6374';
export const BAND = '#0b637433';
