// @vitest-environment happy-dom
import { QueryClient, QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen, waitFor } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import type { Me, Role, RunDetail, RunState } from '../../web/src/api/types';
import { ReviewPanel } from '../../web/src/components/run/ReviewPanel';
import { reviewActions } from '../../web/src/components/run/review-actions';

const ROLES: Role[] = ['viewer', 'analyst', 'lead', 'admin'];
const STATES: RunState[] = ['draft', 'in_review', 'approved', 'returned', 'superseded'];
const CREATOR = { id: 'u-creator', email: 'ana@saltbush.test', name: 'Ana' };

const meAs = (role: Role, own: boolean): Me => ({
  id: own ? CREATOR.id : `u-other-${role}`,
  email: `${role}@saltbush.test`,
  name: role,
  role,
  via: 'session',
  permissions: [],
});

/** The roles table of interfaces.md, written out independently of the code under test. */
function expected(role: Role, state: RunState, own: boolean) {
  const contributor = role !== 'viewer';
  return {
    submit: contributor && own && (state === 'draft' || state === 'returned'),
    approve: role === 'lead' && !own && state === 'in_review',
    return: role === 'lead' && !own && state === 'in_review',
    comment: contributor,
  };
}

describe('reviewActions: who may do what, in which state', () => {
  for (const role of ROLES)
    for (const state of STATES)
      for (const own of [true, false])
        it(`${role}, ${state}, ${own ? 'own' : "someone else's"} run`, () => {
          const a = reviewActions(meAs(role, own), { state, created_by: CREATOR });
          const { notes, ...buttons } = a;
          expect(buttons).toEqual(expected(role, state, own));
          // whenever a decision is impossible for a reason the person may not guess, say why
          if (!buttons.approve && state === 'in_review') expect(notes.length).toBeGreaterThan(0);
        });

  it('nobody signed in: nothing, and a sentence saying so', () => {
    const a = reviewActions(null, { state: 'in_review', created_by: CREATOR });
    expect([a.submit, a.approve, a.return, a.comment]).toEqual([false, false, false, false]);
    expect(a.notes).toEqual(['Sign in to review runs.']);
  });

  it('explains the missing buttons plainly', () => {
    const review = { state: 'in_review' as const, created_by: CREATOR };
    expect(reviewActions(meAs('lead', true), review).notes).toContain(
      'You created this run: another lead approves it.',
    );
    expect(reviewActions(meAs('viewer', false), review).notes).toContain(
      'Viewers can read runs but not review them.',
    );
    expect(
      reviewActions(meAs('lead', false), { state: 'draft', created_by: CREATOR }).notes.join(' '),
    ).toMatch(/Only Ana/);
  });

  it('an admin never approves, not even a run someone else made', () => {
    const a = reviewActions(meAs('admin', false), { state: 'in_review', created_by: CREATOR });
    expect(a.approve).toBe(false);
    expect(a.return).toBe(false);
    expect(a.comment).toBe(true);
  });
});

// ---- the panel against a fake server ---------------------------------------------------------

function runOf(state: RunState, version = 3): RunDetail {
  return {
    id: 'run-1',
    url: 'http://127.0.0.1/runs/run-1',
    kind: 'dm-fit',
    state,
    version,
    title: null,
    pulsar: 'SBP-A',
    is_reference: true,
    summary: {},
    parameters: {},
    input: [],
    software_version: '0.1.0',
    constant: null,
    created_by: CREATOR,
    upload_id: null,
    created_at: '2026-12-01T10:00:00Z',
    updated_at: '2026-12-01T10:00:00Z',
    submitted_at: null,
    decided_at: null,
    baseline: null,
    reviews: [],
    result: {} as RunDetail['result'],
  };
}

const json = (status: number, body: unknown) =>
  new Response(JSON.stringify(body), {
    status,
    headers: { 'Content-Type': 'application/json' },
  });

/** What the fake server answers to the next POST; every call is recorded. */
let answer: () => Response;
const calls: { url: string; method: string; body: unknown }[] = [];
const fetchMock = vi.fn(async (url: string, init?: RequestInit) => {
  const method = init?.method ?? 'GET';
  calls.push({ url, method, body: init?.body ? JSON.parse(String(init.body)) : undefined });
  if (method === 'GET') return json(200, runOf('in_review', 4));
  return answer();
});

beforeEach(() => {
  calls.length = 0;
  fetchMock.mockClear();
  answer = () => json(201, { id: 'rev-1' });
  vi.stubGlobal('fetch', fetchMock);
});
afterEach(() => {
  cleanup();
  vi.unstubAllGlobals();
});

function renderPanel(run: RunDetail, me: Me | null) {
  const qc = new QueryClient({
    defaultOptions: { queries: { retry: false }, mutations: { retry: false } },
  });
  return render(
    <QueryClientProvider client={qc}>
      <ReviewPanel run={run} me={me} />
    </QueryClientProvider>,
  );
}

const posts = () => calls.filter((c) => c.method === 'POST');
const button = (name: string) => screen.queryByRole('button', { name });

describe('ReviewPanel', () => {
  it('a lead reviewing a colleague’s run sees Approve, Return and Add comment, not Submit', () => {
    renderPanel(runOf('in_review'), meAs('lead', false));
    expect(button('Approve')).not.toBeNull();
    expect(button('Return')).not.toBeNull();
    expect(button('Add comment')).not.toBeNull();
    expect(button('Submit for review')).toBeNull();
    expect(screen.getByLabelText('Comment').tagName).toBe('TEXTAREA');
  });

  it('a lead looking at their own run in review gets no decision and is told why', () => {
    renderPanel(runOf('in_review'), meAs('lead', true));
    expect(button('Approve')).toBeNull();
    expect(button('Return')).toBeNull();
    expect(button('Add comment')).not.toBeNull();
    expect(screen.getByText('You created this run: another lead approves it.')).toBeTruthy();
  });

  it('a viewer gets no buttons and no comment box, and is told why', () => {
    renderPanel(runOf('in_review'), meAs('viewer', false));
    expect(screen.queryAllByRole('button')).toHaveLength(0);
    expect(screen.queryByLabelText('Comment')).toBeNull();
    expect(screen.getByText('Viewers can read runs but not review them.')).toBeTruthy();
  });

  it('the creator of a draft sees Submit for review and sends the version', async () => {
    const user = userEvent.setup();
    answer = () => json(200, { ...runOf('in_review', 4) });
    renderPanel(runOf('draft', 3), meAs('analyst', true));
    expect(button('Approve')).toBeNull();
    await user.click(button('Submit for review')!);
    await waitFor(() => expect(posts()).toHaveLength(1));
    expect(posts()[0]).toMatchObject({ url: '/api/runs/run-1/submit', body: { version: 3 } });
    expect(await screen.findByText(/Submitted for review/)).toBeTruthy();
  });

  it('Return without a comment says so inline and sends nothing', async () => {
    const user = userEvent.setup();
    renderPanel(runOf('in_review'), meAs('lead', false));
    await user.click(button('Return')!);
    expect(screen.getByText(/Returning a run needs a comment/)).toBeTruthy();
    const box = screen.getByLabelText('Comment');
    expect(box.getAttribute('aria-invalid')).toBe('true');
    expect(posts()).toHaveLength(0);
  });

  it('Return with a comment sends decision, comment and the reviewed version', async () => {
    const user = userEvent.setup();
    renderPanel(runOf('in_review', 3), meAs('lead', false));
    await user.type(screen.getByLabelText('Comment'), 'Visit 60214 has a weak lever arm.');
    await user.click(button('Return')!);
    await waitFor(() => expect(posts()).toHaveLength(1));
    expect(posts()[0]).toMatchObject({
      url: '/api/runs/run-1/reviews',
      body: { decision: 'return', comment: 'Visit 60214 has a weak lever arm.', version: 3 },
    });
  });

  it('a 409 answer shows the server’s message and says the run was reloaded', async () => {
    const user = userEvent.setup();
    const message =
      'the run changed since you loaded it (you have version 3, it is now 4, in_review); reload and review again';
    answer = () =>
      json(409, {
        error: { code: 'stale_version', message, details: { current_version: 4 } },
      });
    renderPanel(runOf('in_review', 3), meAs('lead', false));
    await user.click(button('Approve')!);
    const alert = await screen.findByRole('alert');
    expect(alert.textContent).toContain(message);
    expect(alert.textContent).toContain('stale_version');
    expect(alert.textContent).toMatch(/reloaded/);
    expect(posts()[0].body).toMatchObject({ decision: 'approve', version: 3 });
  });
});
