import { NavLink, useNavigate } from 'react-router';
import { isAdmin, canContribute, useSession, useSignOut } from '../api/session';

const link = ({ isActive }: { isActive: boolean }) =>
  isActive
    ? 'font-medium text-accent underline decoration-2 underline-offset-[6px]'
    : 'text-ink-soft hover:text-ink';

export function SiteHeader() {
  const session = useSession();
  const me = session.data;
  const signOut = useSignOut();
  const navigate = useNavigate();
  return (
    <header className="border-b border-rule bg-panel">
      <div className="mx-auto flex max-w-6xl flex-wrap items-baseline gap-x-6 gap-y-2 px-5 py-3">
        <NavLink to="/" className="text-lg font-semibold tracking-tight text-ink">
          Sightline
        </NavLink>
        <nav aria-label="Main" className="flex flex-wrap gap-x-5 gap-y-1 text-sm">
          {me && (
            <>
              <NavLink to="/" end className={link}>
                Overview
              </NavLink>
              <NavLink to="/runs" className={link}>
                Runs
              </NavLink>
              <NavLink to="/compare" className={link}>
                Compare
              </NavLink>
              <NavLink to="/pulsars" className={link}>
                Pulsars
              </NavLink>
              {canContribute(me) && (
                <NavLink to="/analyses/new" className={link}>
                  New analysis
                </NavLink>
              )}
              {isAdmin(me) ? (
                <NavLink to="/admin" className={link}>
                  Admin
                </NavLink>
              ) : (
                canContribute(me) && (
                  // analysts and leads manage their own API tokens on the same page
                  <NavLink to="/admin" className={link}>
                    Tokens
                  </NavLink>
                )
              )}
            </>
          )}
          <NavLink to="/calculator" className={link}>
            Dispersion calculator
          </NavLink>
        </nav>
        <div className="ml-auto flex items-baseline gap-3 text-sm">
          {me ? (
            <>
              <span className="text-ink-soft">
                {me.name} · <span className="font-medium text-ink">{me.role}</span>
              </span>
              <button
                type="button"
                className="text-accent underline underline-offset-2 hover:text-ink"
                onClick={() => signOut.mutate(undefined, { onSettled: () => navigate('/sign-in') })}
              >
                Sign out
              </button>
            </>
          ) : (
            <NavLink to="/sign-in" className={link}>
              Sign in
            </NavLink>
          )}
        </div>
      </div>
    </header>
  );
}
