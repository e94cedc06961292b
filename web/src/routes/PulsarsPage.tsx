import { PageTitle } from '../components/QueryState';

export function PulsarsPage() {
  return <PageTitle>PulsarsPage</PageTitle>;
}
