import { Link, useParams } from 'react-router';
import { ApiError } from '../api/client';
import { useRun } from '../api/runs';
import { useSession } from '../api/session';
import type { RunDetail } from '../api/types';
import { ErrorNotice, Loading, PageTitle } from '../components/QueryState';
import { DmFitView } from '../components/run/DmFitView';
import { DmSeriesView } from '../components/run/DmSeriesView';
import { ReviewHistory } from '../components/run/ReviewHistory';
import { ReviewPanel } from '../components/run/ReviewPanel';
import { RunHeader } from '../components/run/RunHeader';
import { ScatterFitView } from '../components/run/ScatterFitView';
import { ScintView } from '../components/run/ScintView';
import type { ScintResult } from '../../../shared/schemas/scint';
import { PanelHeading, ProvenancePanel } from '../components/run/SummaryPanel';

function Result({ run }: { run: RunDetail }) {
  const r = run.result as RunDetail['result'] | ScintResult;
  switch (r.schema) {
    case 'sightline/dm-fit@1':
      return <DmFitView result={r} />;
    case 'sightline/dm-series@1':
      return <DmSeriesView result={r} />;
    case 'sightline/scatter-fit@1':
      return <ScatterFitView result={r} />;
    case 'sightline/scint@1':
      return <ScintView result={r} pulsar={run.pulsar} />;
    default:
      return (
        <p className="text-sm text-ink-soft">
          This version of the app cannot draw results of this kind; download the JSON instead.
        </p>
      );
  }
}

/** One correction run: what it found, how it was made, and its review. */
export function RunPage() {
  const { id } = useParams();
  const run = useRun(id);
  const { data: me } = useSession();
  if (run.isPending) return <Loading what="the run" />;
  if (run.isError)
    return (
      <>
        <PageTitle>Run</PageTitle>
        <ErrorNotice
          error={run.error}
          action={
            <p className="mt-1">
              {run.error instanceof ApiError && run.error.status === 404
                ? 'There is no run with this id: it may have been mistyped. '
                : ''}
              <Link to="/runs" className="text-accent underline">
                Find it among all runs
              </Link>
              .
            </p>
          }
        />
      </>
    );
  const r = run.data;
  return (
    <>
      <RunHeader run={r} />
      <div className="grid gap-8 lg:grid-cols-[minmax(0,1fr)_20rem]">
        <section aria-labelledby="results-heading" className="flex min-w-0 flex-col gap-3">
          <PanelHeading id="results-heading">Results</PanelHeading>
          <Result run={r} />
        </section>
        <aside className="flex flex-col gap-8" aria-label="Review and provenance">
          <ReviewPanel run={r} me={me} />
          <ReviewHistory reviews={r.reviews} />
          <ProvenancePanel run={r} />
        </aside>
      </div>
    </>
  );
}
