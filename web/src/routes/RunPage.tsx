import { PageTitle } from '../components/QueryState';

export function RunPage() {
  return <PageTitle>RunPage</PageTitle>;
}
