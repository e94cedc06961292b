import { createBrowserRouter } from 'react-router';
import { AppLayout } from './routes/AppLayout';
import { DispersionPage } from './routes/DispersionPage';
import { NotFoundPage } from './routes/NotFoundPage';
import { RouteErrorPage } from './routes/RouteErrorPage';

export const router = createBrowserRouter([
  {
    path: '/',
    element: <AppLayout />,
    errorElement: <RouteErrorPage />,
    children: [
      { index: true, element: <DispersionPage /> },
      { path: '*', element: <NotFoundPage /> },
    ],
  },
]);
