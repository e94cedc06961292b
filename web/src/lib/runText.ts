import type { RunSummaryView } from '../api/types';
import { decimalsFor, fixed, sig } from './format';

/**
 * Decimals for a quantity's values: DM always to 1e-6 pc cm⁻³ (so columns line up); τ and α to
 * the second significant figure of their error.
 */
export function quantityDecimals(q: string, err: number | null | undefined): number {
  if (q === 'dm') return 6;
  return Math.min(6, decimalsFor(err, q === 'alpha' ? 3 : 2));
}

/** A value of a compared quantity, with the decimals its error warrants. */
export function quantityValue(q: string, x: number, err?: number | null): string {
  return fixed(x, quantityDecimals(q, err));
}

export const QUANTITY_LABEL: Record<string, string> = {
  dm: 'DM',
  tau_ref_us: 'τ at ref. freq.',
  tau_us: 'τ',
  alpha: 'α',
  dnu_d_mhz: 'Δν_d',
  dt_d_s: 'Δt_d',
};
export const QUANTITY_UNIT: Record<string, string> = {
  dm: 'pc cm⁻³',
  tau_ref_us: 'µs',
  tau_us: 'µs',
  alpha: '',
  dnu_d_mhz: 'MHz',
  dt_d_s: 's',
};

const n = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const range = (v: unknown): [number, number] | null =>
  Array.isArray(v) && v.length === 2 && typeof v[0] === 'number' ? (v as [number, number]) : null;

/** MJD range "60202–61293" from a summary's mjd_range. */
function mjdSpan(v: unknown): string | null {
  const r = range(v);
  return r ? `MJD ${Math.floor(r[0])}–${Math.ceil(r[1])}` : null;
}

/** A run's key numbers in one short line for lists and selects. */
export function summaryLine(r: Pick<RunSummaryView, 'kind' | 'summary'>): string {
  const s = r.summary;
  if (r.kind === 'dm-fit') {
    const parts = [`${n(s.n_fitted) ?? '?'}/${n(s.n_visits) ?? '?'} visits fitted`];
    const span = mjdSpan(s.mjd_range);
    if (span) parts.push(span);
    if (s.chromatic === true) parts.push('chromatic');
    return parts.join(' · ');
  }
  if (r.kind === 'dm-series') {
    const parts = [`${n(s.n_points) ?? '?'} points`];
    const span = mjdSpan(s.mjd_range);
    if (span) parts.push(span);
    if (s.smoothed === true) parts.push('smoothed');
    return parts.join(' · ');
  }
  if (r.kind === 'scint') {
    const at = n(s.ref_freq_mhz);
    const where = at !== null ? ` at ${Number(at.toFixed(2))} MHz` : '';
    const dnu = n(s.dnu_d_mhz);
    const tau = n(s.tau_us);
    const parts =
      s.status === 'measured' && dnu !== null
        ? [`Δν_d ${sig(dnu, 3)} MHz`, ...(tau !== null ? [`τ ${sig(tau, 3)} µs${where}`] : [])]
        : s.status === 'unresolved'
          ? [
              `unresolved: Δν_d < ${sig(n(s.dnu_d_upper_mhz), 3)} MHz, τ > ${sig(n(s.tau_lower_us), 3)} µs${where}`,
            ]
          : ['scintles not measured'];
    if (typeof s.mjd === 'string') parts.push(`MJD ${Number(s.mjd).toFixed(1)}`);
    return parts.join(' · ');
  }
  const parts = [`${n(s.n_fitted) ?? '?'}/${n(s.n_bands) ?? '?'} bands fitted`];
  const tau = n(s.tau_ref_us);
  const ref = n(s.ref_freq_mhz);
  if (tau !== null) parts.push(`τ ${sig(tau, 3)} µs${ref !== null ? ` at ${ref} MHz` : ''}`);
  const alpha = n(s.alpha);
  const alphaErr = n(s.alpha_err);
  if (alpha !== null)
    parts.push(`α ${fixed(alpha, 2)}${alphaErr !== null ? ` ± ${fixed(alphaErr, 2)}` : ''}`);
  if (typeof s.mjd === 'string') parts.push(`MJD ${Number(s.mjd).toFixed(1)}`);
  return parts.join(' · ');
}
