import type { Role, RunState } from '../../api/types';

/** Who is looking (the signed-in person; null when nobody is). */
export interface Viewer {
  id: string;
  role: Role;
}

/** What of a run decides the review actions. */
export interface RunForReview {
  state: RunState;
  created_by: { id: string; name: string };
}

export interface ReviewActions {
  submit: boolean;
  approve: boolean;
  return: boolean;
  comment: boolean;
  /** plain sentences saying why a decision button is not there */
  notes: string[];
}

const CONTRIBUTORS: Role[] = ['analyst', 'lead', 'admin'];

/**
 * The review buttons a person may use on a run, mirroring the server's rules (interfaces.md
 * roles table): viewers only read; analysts, leads and admins comment and submit their own draft
 * or returned runs; only a lead approves or returns, and never their own run, and only while it
 * is in review.
 */
export function reviewActions(me: Viewer | null | undefined, run: RunForReview): ReviewActions {
  if (!me)
    return {
      submit: false,
      approve: false,
      return: false,
      comment: false,
      notes: ['Sign in to review runs.'],
    };
  if (!CONTRIBUTORS.includes(me.role))
    return {
      submit: false,
      approve: false,
      return: false,
      comment: false,
      notes: ['Viewers can read runs but not review them.'],
    };

  const own = run.created_by.id === me.id;
  const submittable = run.state === 'draft' || run.state === 'returned';
  const inReview = run.state === 'in_review';
  const submit = own && submittable;
  const decide = me.role === 'lead' && !own && inReview;
  const notes: string[] = [];

  if (submittable && !own)
    notes.push(`Only ${run.created_by.name}, who created this run, submits it for review.`);
  if (inReview) {
    if (own && me.role === 'lead') notes.push('You created this run: another lead approves it.');
    else if (own) notes.push('Waiting for a lead to approve or return it.');
    else if (me.role === 'admin')
      notes.push('Admins manage the service; a lead approves or returns runs.');
    else if (me.role !== 'lead') notes.push('Only a lead approves or returns a run.');
  }
  if (run.state === 'approved')
    notes.push('This run is approved: there is nothing left to decide.');
  if (run.state === 'superseded')
    notes.push('A newer approved run replaced this one: there is nothing left to decide.');

  return { submit, approve: decide, return: decide, comment: true, notes };
}
