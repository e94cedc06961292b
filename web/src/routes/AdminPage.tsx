import { PageTitle } from '../components/QueryState';

export function AdminPage() {
  return <PageTitle>AdminPage</PageTitle>;
}
