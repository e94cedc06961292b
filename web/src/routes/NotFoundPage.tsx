import { Link, useLocation } from 'react-router';

export function NotFoundPage() {
  const { pathname } = useLocation();
  return (
    <section className="flex flex-col gap-2">
      <h1 className="text-xl font-semibold">No page here</h1>
      <p className="text-sm text-ink-soft">
        Sightline has no page at <code className="num text-ink">{pathname}</code>.{' '}
        <Link to="/" className="text-accent underline">
          Open the dispersion calculator
        </Link>
        .
      </p>
    </section>
  );
}
