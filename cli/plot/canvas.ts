import { createRequire } from 'node:module';
import { GlobalFonts } from '@napi-rs/canvas';
import { interpolateViridis } from 'd3-scale-chromatic';

const require = createRequire(import.meta.url);
let registered = false;

/** Register the shipped fonts (fontsource) once: a sans for text, a monospace for numbers. */
export function registerFonts(): void {
  if (registered) return;
  GlobalFonts.registerFromPath(
    require.resolve('@fontsource-variable/inter/files/inter-latin-wght-normal.woff2'),
    'SightlineSans',
  );
  GlobalFonts.registerFromPath(
    require.resolve('@fontsource/ibm-plex-mono/files/ibm-plex-mono-latin-400-normal.woff2'),
    'SightlineMono',
  );
  registered = true;
}

/** Sightline's plot colours (the same tokens as the web app). */
export const INK = '#1c2430';
export const INK_SOFT = '#5b6675';
export const PAPER = '#fbfaf7';
export const RULE = '#d9dde3';

/** Frequency colour: viridis from low to high over [loMhz, hiMhz], so a band looks the same everywhere. */
export function frequencyColour(freqMhz: number, loMhz: number, hiMhz: number): string {
  const t =
    hiMhz > loMhz
      ? (Math.log(freqMhz) - Math.log(loMhz)) / (Math.log(hiMhz) - Math.log(loMhz))
      : 0.5;
  // stay clear of viridis' palest yellow so lines keep contrast on paper
  return interpolateViridis(0.05 + 0.8 * Math.min(1, Math.max(0, t)));
}
