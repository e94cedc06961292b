import { useId, type ReactNode } from 'react';
import { Link } from 'react-router';
import type { ScatterFitResult } from '../../../../shared/schemas/scatter-fit';
import type { ScintResult } from '../../../../shared/schemas/scint';
import { SAME_VISIT_DAYS, useSameVisitScatter, type SameVisitScatter } from '../../api/scint';
import { sig } from '../../lib/format';
import { KIND_LABEL } from '../../lib/time';
import { Empty, ErrorNotice, Loading } from '../QueryState';
import { SubHeading } from './Figures';

type PowerLaw = NonNullable<ScatterFitResult['power_law']>;

/**
 * τ of a τ(ν) = τ_ref·(ν/ν_ref)^−α power law carried to `freqMhz`, with the first-order error
 * from σ(τ_ref) and σ(α) (common practice; their covariance is not recorded), as the CLI's
 * `scint analyse --tails` carries it.
 */
export function carryTau(pl: PowerLaw, freqMhz: number): { tauUs: number; errUs: number } {
  const x = Math.log(freqMhz / pl.ref_freq_mhz);
  const tauUs = pl.tau_ref_us * Math.exp(-pl.alpha * x);
  const rel = Math.hypot(pl.tau_ref_err_us / pl.tau_ref_us, (pl.alpha_err ?? 0) * x);
  return { tauUs, errUs: tauUs * rel };
}

const freqText = (f: number) => String(Number(f.toFixed(2)));

const SUPERSCRIPT: Record<string, string> = {
  '-': '⁻',
  '0': '⁰',
  '1': '¹',
  '2': '²',
  '3': '³',
  '4': '⁴',
  '5': '⁵',
  '6': '⁶',
  '7': '⁷',
  '8': '⁸',
  '9': '⁹',
};

/** A ratio to three figures, in powers of ten beyond 1000 or below 0.01: "3.69 × 10⁴". */
export function ratioText(r: number): string {
  if (!Number.isFinite(r) || r <= 0) return '—';
  if (r >= 0.01 && r < 1000) return sig(r, 3);
  const exp = Math.floor(Math.log10(r));
  const m = r / 10 ** exp;
  return `${sig(m, 3)} × 10${[...String(exp)].map((c) => SUPERSCRIPT[c]).join('')}`;
}

function Route({
  title,
  value,
  children,
}: {
  title: string;
  value: ReactNode;
  children?: ReactNode;
}) {
  return (
    <div className="flex flex-col gap-1 rounded-sm border border-rule bg-panel px-3 py-2">
      <h4 className="text-xs text-ink-soft">{title}</h4>
      <p className="num text-base">{value}</p>
      {children && <div className="text-xs text-ink-soft">{children}</div>}
    </div>
  );
}

/** The scintle τ against the tails' τ, in a sentence. */
function Agreement({
  result,
  tails,
}: {
  result: ScintResult;
  tails: { tau: number; err: number | null };
}) {
  if (result.status === 'measured' && result.tau_us !== null) {
    const diff = tails.tau - result.tau_us;
    const sigma = Math.hypot(result.tau_err_us ?? 0, tails.err ?? 0);
    return (
      <p className="text-sm">
        τ from the tails over τ from the scintles:{' '}
        <span className="num">{ratioText(tails.tau / result.tau_us)}</span>; difference{' '}
        <span className="num">{sig(diff, 2)} µs</span>
        {sigma > 0 && (
          <>
            {' '}
            (<span className="num">{sig(Math.abs(diff) / sigma, 2)}σ</span> of the two errors
            combined)
          </>
        )}
        .
      </p>
    );
  }
  if (result.status === 'unresolved' && result.tau_lower_us !== null) {
    const above = tails.tau >= result.tau_lower_us;
    return (
      <p className="text-sm">
        The tails&rsquo; τ lies {above ? 'above' : 'below'} the scintles&rsquo; lower limit of{' '}
        <span className="num">{sig(result.tau_lower_us, 3)} µs</span>:{' '}
        {above ? 'the two routes agree.' : 'the two routes disagree.'}
      </p>
    );
  }
  return null;
}

/** What the scintles say about τ. */
function ScintleRoute({ result }: { result: ScintResult }) {
  const at = `${freqText(result.ref_freq_mhz)} MHz`;
  const value =
    result.status === 'measured' && result.tau_us !== null
      ? `${sig(result.tau_us, 3)} ± ${sig(result.tau_err_us, 2)} µs`
      : result.status === 'unresolved' && result.tau_lower_us !== null
        ? `τ > ${sig(result.tau_lower_us, 3)} µs`
        : '—';
  return (
    <Route title={`From the scintles, at ${at}`} value={value}>
      τ = C₁/(2π Δν_d) with C₁ = <span className="num">{result.c1}</span>
      {result.status === 'unresolved' && ', Δν_d below the channel width'}
      {result.status === 'failed' && '; the scintles could not be measured'}
    </Route>
  );
}

/** The tails' τ from a scattering fit found among the runs. */
function FoundRoute({ found, result }: { found: SameVisitScatter; result: ScintResult }) {
  const pl = found.result.power_law;
  const run = found.run;
  const link = (
    <Link to={`/runs/${encodeURIComponent(run.id)}`} className="text-accent underline">
      {run.pulsar ?? found.result.source} · {KIND_LABEL[run.kind] ?? run.kind}, MJD{' '}
      {found.result.mjd} ({run.state.replace('_', ' ')})
    </Link>
  );
  const others =
    found.candidates > 1
      ? ` One of ${found.candidates} scattering fits within ${SAME_VISIT_DAYS} day; the reviewed ones come first.`
      : '';
  if (!pl)
    return (
      <Route title="From the pulse tails" value="—">
        The scattering fit of this visit, {link}, has no τ(ν) power law (too few fitted bands), so
        its τ cannot be carried to {freqText(result.ref_freq_mhz)} MHz.{others}
      </Route>
    );
  const c = carryTau(pl, result.ref_freq_mhz);
  return (
    <div className="flex flex-col gap-2">
      <Route
        title={`From the pulse tails, carried to ${freqText(result.ref_freq_mhz)} MHz`}
        value={`${sig(c.tauUs, 3)} ± ${sig(c.errUs, 2)} µs`}
      >
        <span className="num">
          τ = {sig(pl.tau_ref_us, 3)} µs · (ν/{freqText(pl.ref_freq_mhz)} MHz)^−{sig(pl.alpha, 3)}
          {pl.alpha_fixed
            ? ' (α fixed)'
            : pl.alpha_err !== null
              ? ` (α ± ${sig(pl.alpha_err, 2)})`
              : ''}
        </span>{' '}
        from {link}.{others}
      </Route>
    </div>
  );
}

/** τ from the scintillation bandwidth beside τ from a profile scattering fit of the same visit. */
export function ScintTauRoutes({ result, pulsar }: { result: ScintResult; pulsar: string | null }) {
  const given = result.tau_from_tails;
  const source = pulsar ?? result.source;
  const lookup = useSameVisitScatter(source, result.mjd, !given);
  const headingId = useId();

  let tailsRoute: ReactNode;
  let tails: { tau: number; err: number | null } | null = null;
  if (given) {
    tails = { tau: given.tau_us, err: given.tau_err_us };
    tailsRoute = (
      <Route
        title={`From the pulse tails, carried to ${freqText(given.freq_mhz)} MHz`}
        value={
          given.tau_err_us !== null
            ? `${sig(given.tau_us, 3)} ± ${sig(given.tau_err_us, 2)} µs`
            : `${sig(given.tau_us, 3)} µs`
        }
      >
        From the scattering fit given to the analysis:{' '}
        <span className="num break-all">{given.from}</span>
      </Route>
    );
  } else if (!result.mjd) {
    tailsRoute = (
      <Empty>
        This result records no visit MJD, so no scattering fit can be matched to it. Re-run{' '}
        <code className="num">sightline scint analyse</code> with{' '}
        <code className="num">--tails fit.json</code>, a scattering fit of the same visit.
      </Empty>
    );
  } else if (lookup.isPending) {
    tailsRoute = <Loading what="the scattering fit of this visit" />;
  } else if (lookup.isError) {
    tailsRoute = (
      <ErrorNotice
        error={lookup.error}
        action={
          <p className="mt-1">
            The scattering fits of {source} could not be read;{' '}
            <button
              type="button"
              className="text-accent underline"
              onClick={() => lookup.refetch()}
            >
              try again
            </button>
            .
          </p>
        }
      />
    );
  } else if (!lookup.data) {
    tailsRoute = (
      <Empty>
        No scattering fit of {source} within {SAME_VISIT_DAYS} day of MJD {result.mjd}. Fit the
        profiles of the same visit with <code className="num">sightline scatter fit</code> and push
        it (<code className="num">sightline runs push</code>), or upload the profiles under{' '}
        <Link to="/analyses/new" className="text-accent underline">
          New analysis
        </Link>
        ; it then shows here beside the scintles.
      </Empty>
    );
  } else {
    const pl = lookup.data.result.power_law;
    if (pl) {
      const c = carryTau(pl, result.ref_freq_mhz);
      tails = { tau: c.tauUs, err: c.errUs };
    }
    tailsRoute = <FoundRoute found={lookup.data} result={result} />;
  }

  return (
    <section aria-labelledby={headingId} className="flex flex-col gap-2">
      <SubHeading>
        <span id={headingId}>Scattering by two routes</span>
      </SubHeading>
      <p className="text-xs text-ink-soft">
        The scattering time τ from the width of the scintles and from the exponential tails of the
        pulse profiles of the same visit, at the band centre.
      </p>
      <div className="grid grid-cols-1 items-start gap-3 sm:grid-cols-2">
        <ScintleRoute result={result} />
        {tailsRoute}
      </div>
      {tails && <Agreement result={result} tails={tails} />}
    </section>
  );
}
