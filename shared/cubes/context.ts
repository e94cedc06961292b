import { InputError } from '../formats/errors.js';
import type { ProfileSet } from '../profiles/types.js';
import { harmonicsOf, resampleHarmonics, type Cube, type Harmonics } from './cube.js';
import { matchProfile, PeakFinder, type ChannelMatch } from './match.js';

/** A template's harmonics ready for one cube: one row for every channel, or one per channel. */
export interface PreparedTemplate {
  harm: Harmonics;
  /** template row used for each cube channel */
  rowOf: Int32Array;
  /** the phase (turns) of the template whose arrival an arrival time marks */
  fiducial: number;
  /** the template's own number of bins (before any resampling) */
  nbinSource: number;
  warnings: string[];
}

/** Relative tolerance for a portrait template's channel frequencies to match the cube's. */
const FREQ_MATCH = 1e-6;

/**
 * Fit a template file to a cube: one band serves every channel; a "portrait" with exactly the
 * cube's channel frequencies gives each channel its own. A different number of bins is
 * resampled in the Fourier domain (band-limited, exact for smooth templates) with a warning.
 * Throws InputError (for the template file) when neither layout fits.
 */
export function prepareTemplate(t: ProfileSet, cube: Cube): PreparedTemplate {
  const warnings: string[] = [];
  if (t.source !== cube.source)
    warnings.push(
      `the template is of ${t.source} but the cube of ${cube.source}: check that this is the template you meant`,
    );
  const nbinT = t.bands[0].bins.length;
  const rows = t.bands.length;
  const rowOf = new Int32Array(cube.nchan);
  if (rows !== 1) {
    if (rows !== cube.nchan) {
      throw new InputError(
        `the template has ${rows} bands but the cube has ${cube.nchan} channels: give one band (used for every channel) or one band per channel at the cube's frequencies`,
        { column: 'profiles' },
      );
    }
    for (let c = 0; c < rows; c++) {
      const f = t.bands[c].freqMhz;
      if (Math.abs(f - cube.freqs[c]) > FREQ_MATCH * cube.freqs[c]) {
        throw new InputError(
          `template band ${c + 1} is at ${f} MHz but cube channel ${c + 1} is at ${cube.freqs[c]} MHz: a per-channel template must list the cube's frequencies in order`,
          { row: c + 1, column: `profiles[${c}].freq_mhz` },
        );
      }
      rowOf[c] = c;
    }
  }
  const data = new Float64Array(rows * nbinT);
  t.bands.forEach((b, i) => data.set(b.bins, i * nbinT));
  let harm = harmonicsOf(data, rows, nbinT);
  if (nbinT !== cube.nbin) {
    harm = resampleHarmonics(harm, cube.nbin);
    warnings.push(
      `the template has ${nbinT} bins and the cube ${cube.nbin}: the template was resampled in the Fourier domain${nbinT < cube.nbin ? ` (harmonics above ${Math.floor((nbinT - 1) / 2)} are absent, which costs some precision on sharp pulses)` : ''}`,
    );
  }
  for (let r = 0; r < rows; r++) {
    if (!(harm.power[r] > 0)) {
      throw new InputError('the template has no pulse: all its harmonics are zero', {
        row: r + 1,
        column: `profiles[${r}].bins`,
      });
    }
  }
  return { harm, rowOf, fiducial: t.fiducialPhase ?? 0, nbinSource: nbinT, warnings };
}

/** Every channel of a cube matched to the template, with what later steps share. */
export interface CubeContext {
  cube: Cube;
  template: PreparedTemplate;
  x: Harmonics;
  /** per-bin σ of each channel (NaN: flagged) */
  sigma: Float64Array;
  /** s² of each channel's harmonics (NaN: flagged) */
  s2: Float64Array;
  /** null for flagged channels */
  matches: Array<ChannelMatch | null>;
  finder: PeakFinder;
  /** scratch for cross-spectra (length h) */
  zre: Float64Array;
  zim: Float64Array;
}

/**
 * Harmonics of every channel and a template match per channel (Taylor 1992). A channel's
 * noise is the file's σ when given (s² = nbin·σ²/2); otherwise the match's residuals set it.
 */
export function analyseCube(cube: Cube, template: PreparedTemplate): CubeContext {
  const x = harmonicsOf(cube.data, cube.nchan, cube.nbin);
  const h = x.h;
  const finder = new PeakFinder(cube.nbin, h);
  const zre = new Float64Array(h);
  const zim = new Float64Array(h);
  const given = cube.noise;
  const sigma = new Float64Array(cube.nchan).fill(NaN);
  const s2 = new Float64Array(cube.nchan);
  const matches: Array<ChannelMatch | null> = [];
  const t = template.harm;
  for (let c = 0; c < cube.nchan; c++) {
    if (cube.flagged[c]) {
      matches.push(null);
      s2[c] = NaN;
      continue;
    }
    const row = template.rowOf[c];
    const s2Given = Number.isFinite(given[c]) ? (cube.nbin * given[c] * given[c]) / 2 : undefined;
    const m = matchProfile(
      x.re,
      x.im,
      c * h,
      x.power[c],
      t.re,
      t.im,
      row * h,
      t.power[row],
      finder,
      zre,
      zim,
      s2Given,
    );
    matches.push(m);
    s2[c] = m.s2;
    sigma[c] = s2Given === undefined ? Math.sqrt((2 * m.s2) / cube.nbin) : given[c];
  }
  return { cube, template, x, sigma, s2, matches, finder, zre, zim };
}

/**
 * The circular mean phase (turns) of the usable channels, weighted by 1/σ_φ²: the reference
 * that per-channel phases are unwrapped around, so no channel lands a whole turn away.
 */
export function referencePhase(ctx: CubeContext, minSnr: number): number {
  let sx = 0;
  let sy = 0;
  for (const m of ctx.matches) {
    if (!m || !m.ok || m.snr < minSnr) continue;
    const w = 1 / (m.phaseErr * m.phaseErr);
    sx += w * Math.cos(2 * Math.PI * m.phase);
    sy += w * Math.sin(2 * Math.PI * m.phase);
  }
  return sx === 0 && sy === 0 ? 0 : Math.atan2(sy, sx) / (2 * Math.PI);
}

/**
 * Cross-spectra w_c·P_ck·T̄_ck of the listed channels against their template rows, row u for
 * channel channels[u] (weights default to 1).
 */
export function crossSpectra(
  ctx: CubeContext,
  channels: ArrayLike<number>,
  weights?: ArrayLike<number>,
): { re: Float64Array; im: Float64Array } {
  const { x, template } = ctx;
  const h = x.h;
  const re = new Float64Array(channels.length * h);
  const im = new Float64Array(channels.length * h);
  for (let u = 0; u < channels.length; u++) {
    const c = channels[u];
    const w = weights ? weights[c] : 1;
    const row = template.rowOf[c];
    for (let k = 0; k < h; k++) {
      const a = x.re[c * h + k];
      const b = x.im[c * h + k];
      const tr = template.harm.re[row * h + k];
      const ti = template.harm.im[row * h + k];
      re[u * h + k] = w * (a * tr + b * ti);
      im[u * h + k] = w * (b * tr - a * ti);
    }
  }
  return { re, im };
}
