import { useId, type ReactNode } from 'react';
import { Link, useSearchParams } from 'react-router';
import { useCompare, useRunDetails, type CompareView } from '../api/compare';
import { useBaselines, usePulsars, useRun, useRuns } from '../api/runs';
import type { RunSummaryView } from '../api/types';
import { AbLegend, DmOverlay, TauOverlay, ZPlot } from '../components/browse/CompareCharts';
import { CompareItemsTable } from '../components/browse/CompareItemsTable';
import { fixed, sig } from '../lib/format';
import { summaryLine } from '../lib/runText';
import { dmSeriesOf, tauOf } from '../components/browse/series';
import { Empty, ErrorNotice, Loading, PageTitle } from '../components/QueryState';
import { StateBadge } from '../components/StateBadge';
import { dateTime, KIND_LABEL } from '../lib/time';

const control =
  'w-full rounded-sm border border-edge bg-panel px-2 py-1 text-sm text-ink disabled:border-rule disabled:text-ink-soft';

const STATE_WORD: Record<string, string> = { in_review: 'in review' };

function runOption(r: RunSummaryView, baselineRunIds: Set<string>): string {
  return [
    KIND_LABEL[r.kind] ?? r.kind,
    STATE_WORD[r.state] ?? r.state,
    baselineRunIds.has(r.id) ? 'baseline' : null,
    dateTime(r.created_at),
    r.created_by.name,
    r.title,
  ]
    .filter(Boolean)
    .join(' · ');
}

function Select({
  label,
  value,
  onChange,
  disabled,
  children,
  hint,
}: {
  label: string;
  value: string;
  onChange: (v: string) => void;
  disabled?: boolean;
  children: ReactNode;
  hint?: ReactNode;
}) {
  const id = useId();
  return (
    <div className="flex min-w-0 flex-col gap-0.5">
      <label htmlFor={id} className="text-xs font-medium text-ink-soft">
        {label}
      </label>
      <select
        id={id}
        value={value}
        disabled={disabled}
        onChange={(e) => onChange(e.target.value)}
        className={control}
      >
        {children}
      </select>
      {hint && <p className="text-xs text-ink-soft">{hint}</p>}
    </div>
  );
}

function Section({ title, children }: { title: string; children: ReactNode }) {
  const id = useId();
  return (
    <section aria-labelledby={id} className="flex flex-col gap-3">
      <h2 id={id} className="text-base font-semibold tracking-tight">
        {title}
      </h2>
      {children}
    </section>
  );
}

function RunCard({ which, run }: { which: 'A' | 'B'; run: RunSummaryView }) {
  return (
    <div className="flex flex-col gap-1 rounded-sm border border-rule bg-panel px-3 py-2 text-sm">
      <div className="flex flex-wrap items-baseline gap-x-2">
        <span className="font-semibold">Run {which}</span>
        <Link to={`/runs/${run.id}`} className="text-accent underline-offset-2 hover:underline">
          {run.pulsar ?? '—'} · {KIND_LABEL[run.kind] ?? run.kind}
        </Link>
        <StateBadge state={run.state} />
      </div>
      <p className="text-xs text-ink-soft">
        {run.created_by.name} · <span className="num">{dateTime(run.created_at)}</span> · software{' '}
        <span className="num">{run.software_version}</span>
        {run.title ? ` · ${run.title}` : ''}
      </p>
      <p className="text-xs text-ink-soft">{summaryLine(run)}</p>
    </div>
  );
}

function Stat({ label, value, alert }: { label: string; value: ReactNode; alert?: boolean }) {
  return (
    <div className="flex flex-col">
      <dt className="text-xs text-ink-soft">{label}</dt>
      <dd className={`num text-lg ${alert ? 'font-medium text-alert' : ''}`}>{value}</dd>
    </div>
  );
}

function LabelList({ title, items, empty }: { title: string; items: string[]; empty: string }) {
  const id = useId();
  return (
    <div className="flex min-w-0 flex-col gap-1">
      <h3 id={id} className="text-sm font-medium">
        {title} <span className="num text-ink-soft">({items.length})</span>
      </h3>
      {items.length ? (
        <ul aria-labelledby={id} className="num max-h-64 overflow-y-auto text-xs leading-5">
          {items.map((s) => (
            <li key={s}>{s}</li>
          ))}
        </ul>
      ) : (
        <p className="text-xs text-ink-soft">{empty}</p>
      )}
    </div>
  );
}

function Plots({ cmp }: { cmp: CompareView }) {
  const details = useRunDetails([cmp.a.id, cmp.b.id]);
  const [ra, rb] = [cmp.a.id, cmp.b.id].map((id) => details.data.find((d) => d.id === id));
  const legendA = `${cmp.a.created_by.name}, ${dateTime(cmp.a.created_at)} (${STATE_WORD[cmp.a.state] ?? cmp.a.state})`;
  const legendB = `${cmp.b.created_by.name}, ${dateTime(cmp.b.created_at)} (${STATE_WORD[cmp.b.state] ?? cmp.b.state})`;

  let overlay: ReactNode;
  if (details.errors.length) overlay = <ErrorNotice error={details.errors[0]} />;
  else if (!ra || !rb) overlay = <Loading what="both runs’ results" />;
  else if (cmp.kind === 'scatter-fit') {
    const ta = tauOf(ra.result);
    const tb = tauOf(rb.result);
    overlay =
      ta && tb ? (
        <>
          <h2 className="text-base font-semibold tracking-tight">
            Scattering time against frequency
          </h2>
          <AbLegend aLabel={legendA} bLabel={legendB} line />
          <TauOverlay a={ta} b={tb} />
        </>
      ) : null;
  } else {
    const pulsar = cmp.a.pulsar;
    const da = dmSeriesOf(ra.result, pulsar);
    const db = dmSeriesOf(rb.result, pulsar);
    overlay =
      da && db ? (
        <>
          <h2 className="text-base font-semibold tracking-tight">DM against MJD</h2>
          <AbLegend aLabel={legendA} bLabel={legendB} />
          {da.dmKind !== db.dmKind && (
            <p className="text-xs text-alert">
              Run A’s DMs are {da.dmKind} and run B’s are {db.dmKind}: they share one axis here but
              are not comparable.
            </p>
          )}
          <DmOverlay a={da} b={db} />
        </>
      ) : null;
  }
  const byFreq = cmp.kind === 'scatter-fit';
  const zItems = cmp.items.filter((i) => (byFreq ? i.freq_mhz !== undefined : i.mjd !== undefined));
  return (
    <div className="flex flex-col gap-3">
      {overlay}
      <h2 className="mt-4 text-base font-semibold tracking-tight">
        Change per {byFreq ? 'band' : 'visit'} in units of σ
      </h2>
      {zItems.length ? (
        <ZPlot items={zItems} by={byFreq ? 'freq' : 'mjd'} />
      ) : (
        <Empty>No {byFreq ? 'band' : 'visit'} was compared, so there is nothing to plot.</Empty>
      )}
    </div>
  );
}

function CompareResultView({ cmp }: { cmp: CompareView }) {
  const s = cmp.summary;
  const finite = cmp.items.filter((i) => i.z !== null);
  const over1 = finite.filter((i) => Math.abs(i.z as number) > 1);
  const over3 = finite.filter((i) => Math.abs(i.z as number) > 3);
  const unit = cmp.kind === 'scatter-fit' ? 'band' : cmp.kind === 'dm-series' ? 'point' : 'visit';
  return (
    <div className="flex flex-col gap-8">
      <div className="grid gap-3 md:grid-cols-2">
        <RunCard which="A" run={cmp.a} />
        <RunCard which="B" run={cmp.b} />
      </div>
      <dl className="flex flex-wrap gap-x-8 gap-y-2">
        <Stat label="Matched" value={s.n_matched} />
        <Stat label="Only in A" value={s.n_a_only} />
        <Stat label="Only in B" value={s.n_b_only} />
        <Stat label="Compared values" value={cmp.items.length} />
        <Stat
          label="max |z|"
          value={s.max_abs_z === null ? '—' : fixed(s.max_abs_z, 2)}
          alert={(s.max_abs_z ?? 0) > 3}
        />
        <Stat label="rms z" value={s.rms_z === null ? '—' : fixed(s.rms_z, 2)} />
        <Stat label="Beyond 3σ" value={s.n_over_3sigma} alert={s.n_over_3sigma > 0} />
      </dl>
      <aside className="rounded-sm border-l-4 border-accent bg-panel px-3 py-2 text-sm">
        <p>
          <span className="font-medium">How σ is taken here:</span> Δ = B − A and σ = √(σ
          <sub>A</sub>² + σ<sub>B</sub>²), z = Δ/σ. This treats the two quoted errors as
          independent. When both runs fit the same data their errors are strongly correlated, so the
          true σ of the difference is smaller and these z values <em>understate</em> how significant
          a change is. The baseline check (<code className="num">sightline baseline check</code>)
          divides by the baseline’s own error instead.
        </p>
      </aside>
      <Plots cmp={cmp} />
      <Section title="What moved">
        <p className="text-sm">
          <span className="num font-medium">{over1.length}</span> of{' '}
          <span className="num">{finite.length}</span> compared values moved beyond 1σ,{' '}
          <span className={`num font-medium ${over3.length ? 'text-alert' : ''}`}>
            {over3.length}
          </span>{' '}
          beyond 3σ
          {finite.length ? (
            <span className="text-ink-soft">
              {' '}
              (for independent errors about {sig(finite.length * 0.317, 2)} and{' '}
              {sig(finite.length * 0.0027, 1)} are expected by chance)
            </span>
          ) : null}
          .
        </p>
        {over1.length ? (
          <CompareItemsTable
            items={over1}
            caption={`Values beyond 1σ, largest |z| first; rows marked 3σ moved beyond 3σ. σ in the units of each quantity.`}
          />
        ) : (
          <Empty>
            Nothing moved beyond 1σ: the two runs agree within their quoted errors everywhere they
            can be compared.
          </Empty>
        )}
        {cmp.items.length > over1.length && (
          <details className="text-sm">
            <summary className="cursor-pointer text-accent">
              Show all {cmp.items.length} compared values
            </summary>
            <div className="mt-2">
              <CompareItemsTable items={cmp.items} />
            </div>
          </details>
        )}
      </Section>
      <Section title="Not matched or not compared">
        <div className="grid gap-6 md:grid-cols-3">
          <LabelList
            title="Only in run A"
            items={cmp.a_only}
            empty={`Every ${unit} of A is in B.`}
          />
          <LabelList
            title="Only in run B"
            items={cmp.b_only}
            empty={`Every ${unit} of B is in A.`}
          />
          <LabelList
            title="Not compared, with the reason"
            items={cmp.not_compared}
            empty="Every matched value was compared."
          />
        </div>
      </Section>
    </div>
  );
}

export function ComparePage() {
  const [params, setParams] = useSearchParams();
  const a = params.get('a') ?? '';
  const b = params.get('b') ?? '';
  const runA = useRun(a || undefined);
  const pulsar = params.get('pulsar') ?? runA.data?.pulsar ?? '';
  const pulsars = usePulsars();
  const runs = useRuns({ pulsar, page_size: 200 }, !!pulsar);
  const baselines = useBaselines();
  const cmp = useCompare(a || undefined, b || undefined);

  const set = (changes: Record<string, string | null>) =>
    setParams(
      (prev) => {
        const next = new URLSearchParams(prev);
        for (const [k, v] of Object.entries(changes)) {
          if (v) next.set(k, v);
          else next.delete(k);
        }
        return next;
      },
      { replace: false },
    );

  const list = pulsar ? (runs.data?.items ?? []) : [];
  const baselineIds = new Set((baselines.data?.items ?? []).map((x) => x.run_id));
  const kindA = list.find((r) => r.id === a)?.kind ?? runA.data?.kind;
  const listB = list.filter((r) => r.id !== a && (!kindA || r.kind === kindA));
  const names = pulsars.data?.items.map((p) => p.name) ?? [];
  if (pulsar && !names.includes(pulsar)) names.push(pulsar);
  const kinds = [...new Set(list.map((r) => r.kind))];

  let body: ReactNode;
  if (!pulsar)
    body = (
      <Empty>
        Pick a pulsar, then two of its runs of the same kind. The{' '}
        <span className="font-medium">Compare with…</span> link on a run page fills in run A.
      </Empty>
    );
  else if (runs.isPending) body = <Loading what={`the runs of ${pulsar}`} />;
  else if (runs.isError) body = <ErrorNotice error={runs.error} />;
  else if (!list.length)
    body = (
      <Empty>
        {pulsar} has no runs yet. Push results with <code className="num">sightline runs push</code>{' '}
        and come back.
      </Empty>
    );
  else if (!a)
    body = (
      <Empty>
        Pick run A: the run to compare from (for a review, usually the approved set or the
        baseline).
      </Empty>
    );
  else if (!listB.length)
    body = (
      <Empty>
        {pulsar} has no other {KIND_LABEL[kindA ?? ''] ?? ''} run to compare run A with. Push
        another with <code className="num">sightline runs push</code>, or pick a different run A.
      </Empty>
    );
  else if (!b) body = <Empty>Pick run B: the run to compare with run A.</Empty>;
  else if (a === b)
    body = <Empty>Run A and run B are the same run; pick two different runs.</Empty>;
  else if (cmp.isPending) body = <Loading what="the comparison" />;
  else if (cmp.isError)
    body = (
      <ErrorNotice
        error={cmp.error}
        action={
          <p className="mt-1 text-ink-soft">
            Runs can be compared only when both hold the same kind of result.
          </p>
        }
      />
    );
  else body = <CompareResultView cmp={cmp.data} />;

  return (
    <>
      <PageTitle>Compare runs</PageTitle>
      <form
        aria-label="Runs to compare"
        onSubmit={(e) => e.preventDefault()}
        className="mb-6 grid items-start gap-4 rounded-sm border border-rule bg-panel p-3 md:grid-cols-[12rem_1fr_1fr_auto]"
      >
        <Select
          label="Pulsar"
          value={pulsar}
          onChange={(v) => set({ pulsar: v, a: null, b: null })}
        >
          <option value="">Choose a pulsar…</option>
          {names.map((n) => (
            <option key={n} value={n}>
              {n}
            </option>
          ))}
        </Select>
        <Select
          label="Run A"
          value={a}
          disabled={!pulsar || !list.length}
          onChange={(v) => {
            const k = list.find((r) => r.id === v)?.kind;
            const bKind = list.find((r) => r.id === b)?.kind;
            set({ a: v, pulsar, b: b && bKind === k && b !== v ? b : null });
          }}
        >
          <option value="">Choose run A…</option>
          {a && !list.some((r) => r.id === a) && (
            <option value={a}>{runA.data ? runOption(runA.data, baselineIds) : a}</option>
          )}
          {kinds.map((k) => (
            <optgroup key={k} label={KIND_LABEL[k] ?? k}>
              {list
                .filter((r) => r.kind === k)
                .map((r) => (
                  <option key={r.id} value={r.id}>
                    {runOption(r, baselineIds)}
                  </option>
                ))}
            </optgroup>
          ))}
        </Select>
        <Select
          label="Run B"
          value={b}
          disabled={!a || !listB.length}
          onChange={(v) => set({ b: v, pulsar })}
          hint={kindA ? `Runs of the same kind as A (${KIND_LABEL[kindA] ?? kindA}).` : undefined}
        >
          <option value="">Choose run B…</option>
          {b && !listB.some((r) => r.id === b) && <option value={b}>{b}</option>}
          {listB.map((r) => (
            <option key={r.id} value={r.id}>
              {runOption(r, baselineIds)}
            </option>
          ))}
        </Select>
        <button
          type="button"
          disabled={!a || !b}
          onClick={() => set({ a: b, b: a })}
          className="rounded-sm border border-edge bg-panel px-3 py-1 text-sm hover:border-accent disabled:border-rule disabled:text-ink-soft md:mt-[1.125rem]"
        >
          Swap A and B
        </button>
      </form>
      {runA.isError && a && <ErrorNotice error={runA.error} />}
      {body}
    </>
  );
}
