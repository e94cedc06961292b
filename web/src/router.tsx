import { createBrowserRouter } from 'react-router';
import { AdminPage } from './routes/AdminPage';
import { AppLayout, RequireSession } from './routes/AppLayout';
import { ComparePage } from './routes/ComparePage';
import { DispersionPage } from './routes/DispersionPage';
import { NewAnalysisPage } from './routes/NewAnalysisPage';
import { NotFoundPage } from './routes/NotFoundPage';
import { OverviewPage } from './routes/OverviewPage';
import { PulsarPage } from './routes/PulsarPage';
import { PulsarsPage } from './routes/PulsarsPage';
import { RouteErrorPage } from './routes/RouteErrorPage';
import { RunPage } from './routes/RunPage';
import { RunsPage } from './routes/RunsPage';
import { SignInPage } from './routes/SignInPage';

export const router = createBrowserRouter([
  {
    path: '/',
    element: <AppLayout />,
    errorElement: <RouteErrorPage />,
    children: [
      { path: 'sign-in', element: <SignInPage /> },
      { path: 'calculator', element: <DispersionPage /> },
      {
        element: <RequireSession />,
        children: [
          { index: true, element: <OverviewPage /> },
          { path: 'runs', element: <RunsPage /> },
          { path: 'runs/:id', element: <RunPage /> },
          { path: 'compare', element: <ComparePage /> },
          { path: 'pulsars', element: <PulsarsPage /> },
          { path: 'pulsars/:name', element: <PulsarPage /> },
          { path: 'analyses/new', element: <NewAnalysisPage /> },
          { path: 'admin', element: <AdminPage /> },
        ],
      },
      { path: '*', element: <NotFoundPage /> },
    ],
  },
]);
