import { isRouteErrorResponse, Link, useRouteError } from 'react-router';

export function RouteErrorPage() {
  const error = useRouteError();
  const detail = isRouteErrorResponse(error)
    ? `${error.status} ${error.statusText}`
    : error instanceof Error
      ? error.message
      : String(error);
  return (
    <main className="mx-auto flex max-w-5xl flex-col gap-2 px-5 py-6">
      <h1 className="text-xl font-semibold">Something went wrong</h1>
      <p className="num text-sm text-alert">{detail}</p>
      <p className="text-sm">
        <Link to="/" className="text-accent underline">
          Back to the overview
        </Link>
      </p>
    </main>
  );
}
