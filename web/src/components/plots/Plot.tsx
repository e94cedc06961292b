import * as ObsPlot from '@observablehq/plot';
import { useEffect, useRef } from 'react';

/**
 * An Observable Plot figure in React: `make` builds the figure (SVG or a figure element) from the
 * plot library; it is rebuilt when `deps` change. `label` names the figure for screen readers,
 * and `summary` (optional) says in words what it shows.
 */
export function Plot({
  make,
  deps,
  label,
  summary,
}: {
  make: () => ReturnType<typeof ObsPlot.plot>;
  deps: unknown[];
  label: string;
  summary?: string;
}) {
  const ref = useRef<HTMLDivElement>(null);
  useEffect(() => {
    const el = ref.current;
    if (!el) return;
    const figure = make();
    figure.setAttribute('aria-hidden', 'true');
    el.replaceChildren(figure);
    return () => figure.remove();
  }, deps);
  return (
    // a named group: the drawing itself is hidden from screen readers, the caption says in words
    // what it shows
    <figure className="flex flex-col gap-1" aria-label={label}>
      <div ref={ref} className="overflow-x-auto" />
      {summary && <figcaption className="text-xs text-ink-soft">{summary}</figcaption>}
    </figure>
  );
}

export { ObsPlot };
