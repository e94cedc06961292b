import { useEffect } from 'react';
import { Navigate, Outlet, useLocation, useNavigate } from 'react-router';
import { useQueryClient } from '@tanstack/react-query';
import { setUnauthenticatedHandler } from '../api/client';
import { useSession } from '../api/session';
import { Loading } from '../components/QueryState';
import { SiteFooter } from '../components/SiteFooter';
import { SiteHeader } from '../components/SiteHeader';

export function AppLayout() {
  const navigate = useNavigate();
  const location = useLocation();
  const qc = useQueryClient();
  // a session that expires mid-visit: back to sign-in, then back here
  useEffect(() => {
    setUnauthenticatedHandler(() => {
      qc.setQueryData(['me'], null);
      if (!location.pathname.startsWith('/sign-in'))
        navigate(`/sign-in?next=${encodeURIComponent(location.pathname + location.search)}`);
    });
    return () => setUnauthenticatedHandler(undefined);
  }, [navigate, location, qc]);
  return (
    <div className="flex min-h-screen flex-col">
      <a
        href="#main"
        className="sr-only focus:not-sr-only focus:absolute focus:left-2 focus:top-2 focus:bg-panel focus:px-3 focus:py-2"
      >
        Skip to content
      </a>
      <SiteHeader />
      <main id="main" className="mx-auto w-full max-w-6xl flex-1 px-5 py-6">
        <Outlet />
      </main>
      <SiteFooter />
    </div>
  );
}

/** Pages behind sign-in: without a session, go to sign-in and come back afterwards. */
export function RequireSession() {
  const session = useSession();
  const location = useLocation();
  if (session.isPending) return <Loading what="your session" />;
  if (!session.data)
    return (
      <Navigate
        to={`/sign-in?next=${encodeURIComponent(location.pathname + location.search)}`}
        replace
      />
    );
  return <Outlet />;
}
