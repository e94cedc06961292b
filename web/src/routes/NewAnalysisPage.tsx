import { Link } from 'react-router';
import { canContribute, useSession } from '../api/session';
import { NewAnalysisForm } from '../components/forms/NewAnalysisForm';
import { Empty, PageTitle } from '../components/QueryState';

export function NewAnalysisPage() {
  const { data: me } = useSession();
  if (!canContribute(me))
    return (
      <>
        <PageTitle>New analysis</PageTitle>
        <Empty>
          You need the analyst role to upload data and run analyses. Ask your group&apos;s admin for
          it; meanwhile you can read and download{' '}
          <Link to="/runs" className="text-accent underline">
            correction runs
          </Link>
          .
        </Empty>
      </>
    );
  return (
    <>
      <PageTitle>New analysis</PageTitle>
      <p className="mb-6 max-w-3xl text-sm text-ink-soft">
        Upload an arrival-time table or a profile set and run a fit on the server. The result
        becomes a draft correction run of yours, with the file&apos;s SHA-256, the options and the
        software version recorded; submit it for review from its run page.
      </p>
      <NewAnalysisForm />
    </>
  );
}
