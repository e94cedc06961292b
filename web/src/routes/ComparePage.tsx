import { PageTitle } from '../components/QueryState';

export function ComparePage() {
  return <PageTitle>ComparePage</PageTitle>;
}
