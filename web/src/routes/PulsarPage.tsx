import { PageTitle } from '../components/QueryState';

export function PulsarPage() {
  return <PageTitle>PulsarPage</PageTitle>;
}
