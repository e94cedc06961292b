import { useState, type FormEvent } from 'react';
import { Navigate, useNavigate, useSearchParams } from 'react-router';
import { useSession, useSignIn } from '../api/session';
import { ErrorNotice, PageTitle } from '../components/QueryState';

/** Only paths inside the app are followed after sign-in (never another site). */
const safeNext = (next: string | null) =>
  next && next.startsWith('/') && !next.startsWith('//') ? next : '/';

export function SignInPage() {
  const [params] = useSearchParams();
  const next = safeNext(params.get('next'));
  const session = useSession();
  const signIn = useSignIn();
  const navigate = useNavigate();
  const [email, setEmail] = useState('');
  const [password, setPassword] = useState('');
  if (session.data) return <Navigate to={next} replace />;
  const submit = (e: FormEvent) => {
    e.preventDefault();
    signIn.mutate({ email, password }, { onSuccess: () => navigate(next, { replace: true }) });
  };
  return (
    <div className="mx-auto max-w-sm">
      <PageTitle>Sign in</PageTitle>
      {params.get('next') && (
        <p className="mb-3 text-sm text-ink-soft">Sign in to continue where you were.</p>
      )}
      <form
        onSubmit={submit}
        className="flex flex-col gap-3 rounded-sm border border-rule bg-panel p-4"
      >
        <label className="flex flex-col gap-1 text-sm">
          E-mail
          <input
            type="email"
            autoComplete="username"
            required
            value={email}
            onChange={(e) => setEmail(e.target.value)}
            className="rounded-sm border border-edge bg-panel px-2 py-1.5"
          />
        </label>
        <label className="flex flex-col gap-1 text-sm">
          Password
          <input
            type="password"
            autoComplete="current-password"
            required
            value={password}
            onChange={(e) => setPassword(e.target.value)}
            className="rounded-sm border border-edge bg-panel px-2 py-1.5"
          />
        </label>
        {signIn.isError && <ErrorNotice error={signIn.error} />}
        <button
          type="submit"
          disabled={signIn.isPending}
          className="rounded-sm bg-accent px-3 py-1.5 text-sm font-medium text-panel disabled:opacity-60"
        >
          {signIn.isPending ? 'Signing in…' : 'Sign in'}
        </button>
      </form>
      <p className="mt-3 text-xs text-ink-soft">
        Accounts are made by your group's admin. Pipelines use API tokens instead of a password.
      </p>
    </div>
  );
}
