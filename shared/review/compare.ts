import type {
  CompareItem,
  CompareResult,
  ComparableKind,
  ComparedQuantity,
  MovedItem,
} from '../schemas/review.js';

/**
 * Run against run: two results of the same kind, matched visit by visit (dm-fit, dm-series,
 * scint) or band by band (scatter-fit), and every quantity both runs fitted compared in units of
 * the combined error.
 */

// ---- inputs: the few fields compare reads (full results of the four schemas fit these) -------

export interface VisitLike {
  source: string;
  mjd: number;
  status: string;
  dm: number | null;
  dm_err: number | null;
  dm_err_scaled?: number | null;
  dm_kind?: string;
  tau_ref_us?: number;
  tau_ref_err_us?: number;
  ref_freq_mhz?: number;
}
export interface DmFitLike {
  schema: 'sightline/dm-fit@1';
  visits: VisitLike[];
}

export interface SeriesPointLike {
  source: string;
  mjd: number;
  dm: number;
  dm_err: number;
}
export interface DmSeriesLike {
  schema: 'sightline/dm-series@1';
  sources?: { source: string; dm_kind: string }[];
  points: SeriesPointLike[];
}

export interface BandLike {
  freq_mhz: number;
  status: string;
  tau_us: number;
  tau_err_us: number | null;
}
export interface PowerLawLike {
  ref_freq_mhz: number;
  tau_ref_us: number;
  tau_ref_err_us: number;
  alpha: number;
  alpha_err: number | null;
  alpha_fixed?: boolean;
}
export interface ScatterFitLike {
  schema: 'sightline/scatter-fit@1';
  source: string;
  bands: BandLike[];
  power_law: PowerLawLike | null;
}

/** A scint result is one visit: Δν_d, Δt_d and τ (at the band centre) when measured. */
export interface ScintLike {
  schema: 'sightline/scint@1';
  source: string;
  /** exact MJD text; null when the dynamic spectrum gave none (then it matches nothing) */
  mjd: string | null;
  status: string;
  ref_freq_mhz: number;
  dnu_d_mhz: number | null;
  dnu_d_err_mhz: number | null;
  dt_d_s: number | null;
  dt_d_err_s: number | null;
  tau_us: number | null;
  tau_err_us: number | null;
}

export type ComparableResult = DmFitLike | DmSeriesLike | ScatterFitLike | ScintLike;

export interface MatchOptions {
  /** visits / points match when |ΔMJD| is below this (days); default 0.5 */
  mjdToleranceDays?: number;
  /** bands match when |Δf| is below this (MHz); default 0.5 */
  freqToleranceMhz?: number;
}

export const DEFAULT_MJD_TOLERANCE_DAYS = 0.5;
export const DEFAULT_FREQ_TOLERANCE_MHZ = 0.5;
/** how many of the largest moves the summary lists */
export const MOVED_LIMIT = 10;

export type CompareErrorCode = 'kind_mismatch' | 'unsupported_kind';

/** Two results that cannot be compared (different kinds, or a kind compare does not know). */
export class CompareError extends Error {
  constructor(
    readonly code: CompareErrorCode,
    message: string,
  ) {
    super(message);
    this.name = 'CompareError';
  }
}

const KIND_BY_SCHEMA: Record<string, ComparableKind> = {
  'sightline/dm-fit@1': 'dm-fit',
  'sightline/dm-series@1': 'dm-series',
  'sightline/scatter-fit@1': 'scatter-fit',
  'sightline/scint@1': 'scint',
};

/** The kind of a result from its schema tag; throws CompareError('unsupported_kind') otherwise. */
export function comparableKindOf(result: { schema?: unknown }): ComparableKind {
  const tag = typeof result?.schema === 'string' ? result.schema : '';
  const kind = Object.hasOwn(KIND_BY_SCHEMA, tag) ? KIND_BY_SCHEMA[tag] : undefined;
  if (!kind) {
    throw new CompareError(
      'unsupported_kind',
      `cannot compare results of schema "${tag || '(none)'}": only dm-fit, dm-series, scatter-fit and scint`,
    );
  }
  return kind;
}

// ---- entities: one visit, series point, band or power law, reduced to what is compared -------

export interface Measured {
  value: number;
  /** quoted 1σ error; null when the result gives none */
  err: number | null;
  /** held fixed in the fit (a fixed α has no error) */
  fixed?: boolean;
}

/** One matchable thing in a result. */
export interface Entity {
  /** label shown to people and used as the item key ("SBP-B MJD 60214.3", "SBP-B 1400 MHz") */
  label: string;
  source: string;
  /** visits and bands match only within the same group (source, and band vs power law) */
  group: string;
  /** the matched coordinate: MJD (days) or frequency (MHz); the power law uses 0 */
  coord: number;
  mjd?: number;
  freqMhz?: number;
  /** fitted: the fit produced values to compare; otherwise `status` says what happened */
  fitted: boolean;
  status: string;
  /** results that give DMs as absolute values or as offsets cannot be compared across kinds */
  dmKind?: string;
  /** τ at a reference frequency is comparable only when both use the same frequency */
  refFreqMhz?: number;
  values: Partial<Record<ComparedQuantity, Measured>>;
}

/** MJD without trailing zeros, to 4 decimals (≈ 9 s): "60214.3". */
export function formatMjd(mjd: number): string {
  return String(Number(mjd.toFixed(4)));
}
function formatFreq(freqMhz: number): string {
  return String(Number(freqMhz.toFixed(3)));
}

/** Error quoted for a visit's DM: the χ²-scaled one when the fit gives it, else the formal one. */
function visitDmErr(v: VisitLike): number | null {
  return v.dm_err_scaled ?? v.dm_err ?? null;
}

/** The entities of a result, in the result's own order. */
export function entitiesOf(result: ComparableResult): Entity[] {
  const kind = comparableKindOf(result);
  if (kind === 'dm-fit') {
    return (result as DmFitLike).visits.map((v) => {
      const values: Entity['values'] = {};
      const fitted = v.status === 'fitted' && v.dm !== null;
      if (fitted) {
        values.dm = { value: v.dm as number, err: visitDmErr(v) };
        if (v.tau_ref_us !== undefined) {
          values.tau_ref_us = { value: v.tau_ref_us, err: v.tau_ref_err_us ?? null };
        }
      }
      return {
        label: `${v.source} MJD ${formatMjd(v.mjd)}`,
        source: v.source,
        group: `visit\u0000${v.source}`,
        coord: v.mjd,
        mjd: v.mjd,
        fitted,
        status: v.status,
        dmKind: v.dm_kind,
        refFreqMhz: v.ref_freq_mhz,
        values,
      };
    });
  }
  if (kind === 'dm-series') {
    const series = result as DmSeriesLike;
    const dmKinds = new Map((series.sources ?? []).map((s) => [s.source, s.dm_kind]));
    return series.points.map((p) => ({
      label: `${p.source} MJD ${formatMjd(p.mjd)}`,
      source: p.source,
      group: `point\u0000${p.source}`,
      coord: p.mjd,
      mjd: p.mjd,
      fitted: true,
      status: 'fitted',
      dmKind: dmKinds.get(p.source),
      values: { dm: { value: p.dm, err: p.dm_err } },
    }));
  }
  if (kind === 'scint') return [scintEntity(result as ScintLike)];
  const scatter = result as ScatterFitLike;
  const out: Entity[] = scatter.bands.map((b) => ({
    label: `${scatter.source} ${formatFreq(b.freq_mhz)} MHz`,
    source: scatter.source,
    group: `band\u0000${scatter.source}`,
    coord: b.freq_mhz,
    freqMhz: b.freq_mhz,
    fitted: b.status === 'fitted',
    status: b.status,
    values: b.status === 'fitted' ? { tau_us: { value: b.tau_us, err: b.tau_err_us } } : {},
  }));
  const pl = scatter.power_law;
  if (pl) {
    out.push({
      label: `${scatter.source} power law`,
      source: scatter.source,
      group: `power_law\u0000${scatter.source}`,
      coord: 0,
      fitted: true,
      status: 'fitted',
      refFreqMhz: pl.ref_freq_mhz,
      values: {
        alpha: { value: pl.alpha, err: pl.alpha_err, fixed: pl.alpha_fixed === true },
        tau_ref_us: { value: pl.tau_ref_us, err: pl.tau_ref_err_us },
      },
    });
  }
  return out;
}

/**
 * A scint visit. Its MJD is the matched coordinate (two analyses of the same visit — another
 * RFI fence, a remembered mask — match; different visits do not). Δν_d, Δt_d and τ are compared
 * only at the same band centre, since all three scale steeply with frequency.
 */
function scintEntity(r: ScintLike): Entity {
  const mjd = r.mjd === null ? NaN : Number(r.mjd);
  const values: Entity['values'] = {};
  const fitted = r.status === 'measured';
  if (fitted) {
    if (r.dnu_d_mhz !== null) values.dnu_d_mhz = { value: r.dnu_d_mhz, err: r.dnu_d_err_mhz };
    if (r.dt_d_s !== null) values.dt_d_s = { value: r.dt_d_s, err: r.dt_d_err_s };
    if (r.tau_us !== null) values.tau_ref_us = { value: r.tau_us, err: r.tau_err_us };
  }
  return {
    label: `${r.source} MJD ${Number.isFinite(mjd) ? formatMjd(mjd) : '(none)'}`,
    source: r.source,
    group: `scint\u0000${r.source}`,
    coord: mjd,
    ...(Number.isFinite(mjd) ? { mjd } : {}),
    fitted,
    status: r.status,
    refFreqMhz: r.ref_freq_mhz,
    values,
  };
}

// ---- one-to-one matching -----------------------------------------------------------------------

export interface Matching {
  /** [index in a, index in b], in the order of a */
  pairs: [number, number][];
  aOnly: number[];
  bOnly: number[];
}

/**
 * Match a to b one to one: only within the same group and when |Δcoord| < tolerance; the
 * closest pair anywhere is taken first, then the next closest of what is left (greedy by
 * distance, ties broken by position in a, then in b), so each entity matches at most once
 * and a nearer partner always wins over a farther one.
 */
export function matchOneToOne(
  a: Pick<Entity, 'group' | 'coord'>[],
  b: Pick<Entity, 'group' | 'coord'>[],
  tolerance: number,
): Matching {
  const bByGroup = new Map<string, number[]>();
  b.forEach((e, j) => {
    if (!Number.isFinite(e.coord)) return;
    const list = bByGroup.get(e.group) ?? [];
    list.push(j);
    bByGroup.set(e.group, list);
  });
  for (const list of bByGroup.values()) list.sort((x, y) => b[x].coord - b[y].coord || x - y);

  const candidates: { d: number; i: number; j: number }[] = [];
  a.forEach((e, i) => {
    const list = bByGroup.get(e.group);
    if (!list || !Number.isFinite(e.coord)) return;
    // first b with coord > e.coord − tolerance (binary search), then walk while inside
    let lo = 0;
    let hi = list.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (b[list[mid]].coord <= e.coord - tolerance) lo = mid + 1;
      else hi = mid;
    }
    for (let k = lo; k < list.length; k++) {
      const j = list[k];
      const d = Math.abs(b[j].coord - e.coord);
      if (b[j].coord - e.coord >= tolerance) break;
      if (d < tolerance) candidates.push({ d, i, j });
    }
  });
  candidates.sort((x, y) => x.d - y.d || x.i - y.i || x.j - y.j);

  const aTaken = new Array<boolean>(a.length).fill(false);
  const bTaken = new Array<boolean>(b.length).fill(false);
  const pairs: [number, number][] = [];
  for (const c of candidates) {
    if (aTaken[c.i] || bTaken[c.j]) continue;
    aTaken[c.i] = true;
    bTaken[c.j] = true;
    pairs.push([c.i, c.j]);
  }
  pairs.sort((x, y) => x[0] - y[0]);
  return {
    pairs,
    aOnly: a.map((_, i) => i).filter((i) => !aTaken[i]),
    bOnly: b.map((_, j) => j).filter((j) => !bTaken[j]),
  };
}

/** Match the entities of two results of one kind with that kind's tolerance. */
export function matchEntities(
  kind: ComparableKind,
  a: Entity[],
  b: Entity[],
  options: MatchOptions = {},
): Matching {
  const tol =
    kind === 'scatter-fit'
      ? (options.freqToleranceMhz ?? DEFAULT_FREQ_TOLERANCE_MHZ)
      : (options.mjdToleranceDays ?? DEFAULT_MJD_TOLERANCE_DAYS);
  if (!(tol > 0)) throw new RangeError(`match tolerance must be > 0, got ${tol}`);
  return matchOneToOne(a, b, tol);
}

/**
 * Why two matched entities' quantity cannot be compared at all, or null when it can. Used by
 * compare and by the regression check alike.
 */
export function incomparable(q: ComparedQuantity, a: Entity, b: Entity): string | null {
  if (q === 'dm' && a.dmKind !== undefined && b.dmKind !== undefined && a.dmKind !== b.dmKind) {
    return `DM is ${a.dmKind} in one and ${b.dmKind} in the other`;
  }
  if (
    (q === 'tau_ref_us' || q === 'dnu_d_mhz' || q === 'dt_d_s') &&
    a.refFreqMhz !== undefined &&
    b.refFreqMhz !== undefined &&
    Math.abs(a.refFreqMhz - b.refFreqMhz) > 1e-9 * Math.max(a.refFreqMhz, b.refFreqMhz)
  ) {
    return `${q === 'tau_ref_us' ? 'τ reference' : 'band centre'} frequencies differ (${formatFreq(a.refFreqMhz)} vs ${formatFreq(b.refFreqMhz)} MHz)`;
  }
  return null;
}

// ---- compare -------------------------------------------------------------------------------

const QUANTITY_LABEL: Record<ComparedQuantity, string> = {
  dm: 'DM',
  tau_ref_us: 'τ_ref',
  tau_us: 'τ',
  alpha: 'α',
  dnu_d_mhz: 'Δν_d',
  dt_d_s: 'Δt_d',
};
const QUANTITY_UNIT: Record<ComparedQuantity, string> = {
  dm: '',
  tau_ref_us: ' µs',
  tau_us: ' µs',
  alpha: '',
  dnu_d_mhz: ' MHz',
  dt_d_s: ' s',
};
/** the order quantities of one entity are listed in (compare and the regression check) */
export const QUANTITY_ORDER: ComparedQuantity[] = [
  'dm',
  'dnu_d_mhz',
  'dt_d_s',
  'tau_ref_us',
  'tau_us',
  'alpha',
];

function signed(x: number, text: string): string {
  return (x < 0 ? '-' : '+') + text;
}

/** "SBP-B MJD 60214.3: DM moved +2.1σ (+0.00031)" */
export function describeMove(item: Pick<CompareItem, 'key' | 'quantity' | 'delta' | 'z'>): string {
  const z = item.z ?? 0;
  const zText = signed(z, Math.abs(z).toFixed(1));
  const dText = signed(item.delta, String(Number(Math.abs(item.delta).toPrecision(2))));
  return `${item.key}: ${QUANTITY_LABEL[item.quantity]} moved ${zText}σ (${dText}${QUANTITY_UNIT[item.quantity]})`;
}

/**
 * Compare run B against run A (both the same kind).
 *
 * For each quantity fitted in both matched entities: Δ = b − a, σ = √(σ_a² + σ_b²), z = Δ/σ,
 * where a visit's DM error is `dm_err_scaled ?? dm_err`. σ combines the two quoted errors in
 * quadrature as if the fits were independent. When both runs fit the *same* data their errors
 * are strongly correlated, the true σ of the difference is smaller, and this z understates
 * the significance of a change: the comparison is conservative. (The regression check, which
 * is about the same data by design, divides by the baseline's own error instead.)
 *
 * Matching is one to one within a source: visits / points by |ΔMJD| < mjdToleranceDays, bands
 * by |Δf| < freqToleranceMhz (scatter fits of two different sources share nothing; the power
 * law is one entity per source). Entities fitted in only one run, and quantities without an
 * error, are listed in `not_compared` rather than silently dropped.
 *
 * Throws CompareError('kind_mismatch') when the kinds differ and CompareError('unsupported_kind')
 * for any other schema.
 */
export function compareResults(
  a: ComparableResult,
  b: ComparableResult,
  options: MatchOptions = {},
): CompareResult {
  const kindA = comparableKindOf(a);
  const kindB = comparableKindOf(b);
  if (kindA !== kindB) {
    throw new CompareError(
      'kind_mismatch',
      `cannot compare a ${kindA} result with a ${kindB} result`,
    );
  }
  const ea = entitiesOf(a);
  const eb = entitiesOf(b);
  const m = matchEntities(kindA, ea, eb, options);

  const items: CompareItem[] = [];
  const notCompared: string[] = [];
  for (const [i, j] of m.pairs) {
    const x = ea[i];
    const y = eb[j];
    if (!x.fitted || !y.fitted) {
      const which =
        !x.fitted && !y.fitted
          ? `${x.status} in A, ${y.status} in B`
          : !x.fitted
            ? `${x.status} in A`
            : `${y.status} in B`;
      notCompared.push(`${x.label}: ${which}`);
      continue;
    }
    for (const q of QUANTITY_ORDER) {
      const va = x.values[q];
      const vb = y.values[q];
      if (!va && !vb) continue;
      if (!va || !vb) {
        notCompared.push(`${x.label}: ${QUANTITY_LABEL[q]} only in ${va ? 'A' : 'B'}`);
        continue;
      }
      const why = incomparable(q, x, y);
      if (why) {
        notCompared.push(`${x.label}: ${why}`);
        continue;
      }
      if (va.err === null || vb.err === null) {
        const side = va.err === null ? va : vb;
        const what = side.fixed ? 'fixed' : 'has no error';
        notCompared.push(`${x.label}: ${QUANTITY_LABEL[q]} ${what} in ${side === va ? 'A' : 'B'}`);
        continue;
      }
      const delta = vb.value - va.value;
      const sigma = Math.hypot(va.err, vb.err);
      const z = sigma > 0 && Number.isFinite(delta / sigma) ? delta / sigma : null;
      items.push({
        key: x.label,
        source: x.source,
        ...(x.mjd !== undefined ? { mjd: x.mjd } : {}),
        ...(x.freqMhz !== undefined ? { freq_mhz: x.freqMhz } : {}),
        quantity: q,
        a: va.value,
        a_err: va.err,
        b: vb.value,
        b_err: vb.err,
        delta,
        sigma,
        z,
      });
    }
  }

  const zs = items.map((it) => it.z).filter((z): z is number => z !== null);
  const moved: MovedItem[] = items
    .filter((it) => it.z !== null)
    .map((it, order) => ({ it, order }))
    .sort((p, q) => Math.abs(q.it.z as number) - Math.abs(p.it.z as number) || p.order - q.order)
    .slice(0, MOVED_LIMIT)
    .map(({ it }) => ({
      key: it.key,
      quantity: it.quantity,
      delta: it.delta,
      z: it.z as number,
      text: describeMove(it),
    }));

  return {
    schema: 'sightline/compare@1',
    kind: kindA,
    a_only: m.aOnly.map((i) => ea[i].label),
    b_only: m.bOnly.map((j) => eb[j].label),
    not_compared: notCompared,
    items,
    summary: {
      n_matched: m.pairs.length,
      n_a_only: m.aOnly.length,
      n_b_only: m.bOnly.length,
      max_abs_z: zs.length ? zs.reduce((mx, z) => Math.max(mx, Math.abs(z)), 0) : null,
      rms_z: zs.length ? Math.sqrt(zs.reduce((s, z) => s + z * z, 0) / zs.length) : null,
      n_over_3sigma: zs.filter((z) => Math.abs(z) > 3).length,
      moved,
    },
  };
}
