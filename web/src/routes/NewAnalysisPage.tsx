import { PageTitle } from '../components/QueryState';

export function NewAnalysisPage() {
  return <PageTitle>NewAnalysisPage</PageTitle>;
}
