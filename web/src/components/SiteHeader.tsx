import { NavLink } from 'react-router';

export function SiteHeader() {
  return (
    <header className="border-b border-rule bg-panel">
      <div className="mx-auto flex max-w-5xl items-baseline gap-6 px-5 py-3">
        <NavLink to="/" className="text-lg font-semibold tracking-tight text-ink">
          Sightline
        </NavLink>
        <nav aria-label="Main" className="text-sm">
          <NavLink
            to="/"
            end
            className={({ isActive }) =>
              isActive
                ? 'font-medium text-accent underline decoration-2 underline-offset-[6px]'
                : 'text-ink-soft hover:text-ink'
            }
          >
            Dispersion calculator
          </NavLink>
        </nav>
      </div>
    </header>
  );
}
