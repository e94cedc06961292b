import { useHealth } from '../api/health';

function ServerStatus() {
  const health = useHealth();
  if (health.isPending) return <span>Checking the server…</span>;
  if (health.isError)
    return (
      <span className="flex items-center gap-2">
        <span aria-hidden="true" className="size-2 rounded-full bg-state-returned" />
        Server not reachable
      </span>
    );
  return (
    <span className="flex items-center gap-2">
      <span aria-hidden="true" className="size-2 rounded-full bg-state-approved" />
      Server <span className="num">{health.data.software.version}</span>
    </span>
  );
}

export function SiteFooter() {
  return (
    <footer className="border-t border-rule">
      <div
        role="status"
        className="mx-auto flex max-w-6xl justify-between gap-4 px-5 py-3 text-xs text-ink-soft"
      >
        <span>Sightline</span>
        <ServerStatus />
      </div>
    </footer>
  );
}
