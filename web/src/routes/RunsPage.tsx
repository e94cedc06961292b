import { PageTitle } from '../components/QueryState';

export function RunsPage() {
  return <PageTitle>RunsPage</PageTitle>;
}
