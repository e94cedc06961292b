import type { RunState } from '../api/types';

const STYLE: Record<RunState, string> = {
  draft: 'border-state-draft text-state-draft',
  in_review: 'border-state-in-review text-state-in-review',
  approved: 'border-state-approved text-state-approved',
  returned: 'border-state-returned text-state-returned',
  superseded: 'border-state-superseded text-state-superseded line-through decoration-1',
};
const LABEL: Record<RunState, string> = {
  draft: 'draft',
  in_review: 'in review',
  approved: 'approved',
  returned: 'returned',
  superseded: 'superseded',
};

/** A run's state in its own colour (design tokens); the word is always there, not colour alone. */
export function StateBadge({ state }: { state: RunState }) {
  return (
    <span
      className={`inline-block rounded-sm border px-1.5 py-px text-xs font-medium whitespace-nowrap ${STYLE[state]}`}
    >
      {LABEL[state]}
    </span>
  );
}
