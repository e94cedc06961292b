import { zodResolver } from '@hookform/resolvers/zod';
import { useId, useState } from 'react';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { createTokenBody, TOKEN_DAYS, TOKEN_SCOPES } from '../../../../shared/schemas/api';
import {
  useCreateToken,
  useRevokeToken,
  useTokens,
  useUsers,
  type TokenView,
  type UserView,
} from '../../api/admin';
import type { Me } from '../../api/types';
import { dateTime } from '../../lib/time';
import { Empty, ErrorNotice, Loading } from '../QueryState';
import {
  AdminSection,
  buttonClass,
  inputClass,
  primaryClass,
  tableClass,
  TableHead,
  td,
} from './AdminSection';
import { SecretOnce } from './SecretOnce';

type TokenForm = z.input<typeof createTokenBody>;

const SCOPE_HINT: Record<(typeof TOKEN_SCOPES)[number], string> = {
  read: 'read runs, baselines, plots',
  push: 'push results, upload, queue analyses',
  check: 'baseline checks in CI',
};
const LIFETIMES = [7, 30, 90, TOKEN_DAYS.default, TOKEN_DAYS.max];

function CreateToken({ me, users }: { me: Me; users?: UserView[] }) {
  const create = useCreateToken();
  const [made, setMade] = useState<{ token: string; name: string; owner: string }>();
  const nameId = useId();
  const ownerId = useId();
  const lifeId = useId();
  const {
    register,
    handleSubmit,
    reset,
    formState: { errors, isValid },
  } = useForm<TokenForm, unknown, z.output<typeof createTokenBody>>({
    resolver: zodResolver(createTokenBody),
    mode: 'onChange',
    defaultValues: { name: '', scopes: [...TOKEN_SCOPES], expires_in_days: TOKEN_DAYS.default },
  });
  const submit = handleSubmit((b) =>
    create.mutate(b.user_id && b.user_id !== me.id ? b : { ...b, user_id: undefined }, {
      onSuccess: (t) => {
        setMade({
          token: t.token,
          name: t.name,
          owner: users?.find((u) => u.id === t.user_id)?.email ?? me.email,
        });
        reset({
          name: '',
          user_id: b.user_id,
          scopes: b.scopes,
          expires_in_days: b.expires_in_days,
        });
      },
    }),
  );
  return (
    <div className="flex flex-col gap-3">
      <form
        noValidate
        onSubmit={submit}
        className="flex flex-wrap items-start gap-3 rounded-sm border border-rule bg-panel p-3"
      >
        <div className="flex min-w-56 flex-1 flex-col gap-1">
          <label htmlFor={nameId} className="text-sm font-medium">
            Token name
          </label>
          <input
            id={nameId}
            autoComplete="off"
            placeholder="e.g. nightly-pipeline"
            className={inputClass}
            aria-invalid={errors.name ? true : undefined}
            aria-describedby={errors.name ? `${nameId}-error` : `${nameId}-hint`}
            {...register('name')}
          />
          {errors.name ? (
            <p id={`${nameId}-error`} className="text-xs text-alert">
              {errors.name.message}
            </p>
          ) : (
            <p id={`${nameId}-hint`} className="text-xs text-ink-soft">
              Say where it is used, so it can be revoked with confidence.
            </p>
          )}
        </div>
        {users && (
          <div className="flex flex-col gap-1">
            <label htmlFor={ownerId} className="text-sm font-medium">
              Owner
            </label>
            <select
              id={ownerId}
              className={inputClass}
              {...register('user_id', { setValueAs: (v: string) => (v === '' ? undefined : v) })}
            >
              <option value="">me ({me.email})</option>
              {users
                .filter((u) => u.id !== me.id && !u.disabled)
                .map((u) => (
                  <option key={u.id} value={u.id}>
                    {u.email} ({u.role})
                  </option>
                ))}
            </select>
            <p className="text-xs text-ink-soft">A robot account for CI, or a colleague.</p>
          </div>
        )}
        <fieldset className="flex flex-col gap-1">
          <legend className="text-sm font-medium">May</legend>
          {TOKEN_SCOPES.map((sc) => (
            <label key={sc} className="flex items-center gap-2 text-sm">
              <input type="checkbox" value={sc} {...register('scopes')} />
              <span className="font-medium">{sc}</span>
              <span className="text-xs text-ink-soft">{SCOPE_HINT[sc]}</span>
            </label>
          ))}
          {errors.scopes && (
            <p className="text-xs text-alert">{errors.scopes.message ?? 'choose a scope'}</p>
          )}
        </fieldset>
        <div className="flex flex-col gap-1">
          <label htmlFor={lifeId} className="text-sm font-medium">
            Expires after
          </label>
          <select
            id={lifeId}
            className={inputClass}
            {...register('expires_in_days', { valueAsNumber: true })}
          >
            {LIFETIMES.map((d) => (
              <option key={d} value={d}>
                {d} days
              </option>
            ))}
          </select>
          <p className="text-xs text-ink-soft">Every token expires; make a new one in time.</p>
        </div>
        <button
          type="submit"
          disabled={!isValid || create.isPending}
          className={`${primaryClass} mt-6`}
        >
          {create.isPending ? 'Creating…' : 'Create token'}
        </button>
      </form>
      {create.isError && <ErrorNotice error={create.error} />}
      {made && (
        <SecretOnce label="New token" secret={made.token} onDismiss={() => setMade(undefined)}>
          New token <strong>{made.name}</strong> for <strong>{made.owner}</strong>. Put it in the
          pipeline&apos;s secret store as <code className="num">SIGHTLINE_TOKEN</code>.
        </SecretOnce>
      )}
    </div>
  );
}

function TokenRow({ t, owner, showOwner }: { t: TokenView; owner: string; showOwner: boolean }) {
  const revoke = useRevokeToken();
  const nameId = useId();
  const ask = () => {
    if (
      window.confirm(
        `Revoke the token "${t.name}" of ${owner}? Anything still using it is refused from now on.`,
      )
    )
      revoke.mutate(t.id);
  };
  return (
    <tr className={`border-b border-rule last:border-0 ${t.enabled ? '' : 'text-ink-soft'}`}>
      <td className={td}>
        <span id={nameId} className={t.enabled ? 'font-medium' : ''}>
          {t.name}
        </span>
      </td>
      <td className={`${td} num text-xs`}>{t.start ? `${t.start}…` : '—'}</td>
      <td className={`${td} text-xs`}>{t.scopes.join(' · ')}</td>
      {showOwner && <td className={td}>{owner}</td>}
      <td className={`${td} num text-xs`}>{dateTime(t.created_at)}</td>
      <td className={`${td} num text-xs`}>
        {t.last_used_at ? dateTime(t.last_used_at) : <span className="font-sans">never</span>}
      </td>
      <td className={td}>
        {t.enabled ? (
          <span className="text-state-approved">active</span>
        ) : (
          <span className="font-medium text-state-returned">revoked</span>
        )}
        {t.expires_at && (
          <span className="block text-xs text-ink-soft">
            expires <span className="num">{dateTime(t.expires_at)}</span>
          </span>
        )}
      </td>
      <td className={`${td} text-right`}>
        {t.enabled && (
          <button
            type="button"
            className={buttonClass}
            aria-describedby={nameId}
            disabled={revoke.isPending}
            onClick={ask}
          >
            Revoke
          </button>
        )}
        {revoke.isError && (
          <p role="alert" className="mt-1 text-xs text-alert">
            {(revoke.error as Error).message}
          </p>
        )}
      </td>
    </tr>
  );
}

/**
 * API tokens for pipelines and CI. Admins see and manage everyone's (and may make tokens for
 * robot accounts); analysts and leads manage their own.
 */
export function TokensSection({ me, all }: { me: Me; all: boolean }) {
  const tokens = useTokens(all);
  const users = useUsers(all);
  const emailOf = (id: string) =>
    id === me.id ? `${me.email} (you)` : (users.data?.items.find((u) => u.id === id)?.email ?? id);
  const items = tokens.data?.items ?? [];
  const sorted = [...items].sort((a, b) => Number(b.enabled) - Number(a.enabled));
  return (
    <AdminSection
      id="admin-tokens"
      title="API tokens"
      intro={
        all ? (
          'Robots (the CLI in pipelines, CI jobs) sign in with a bearer token. Only a hash is stored: a token is shown once, when it is made. Revoking takes effect at once.'
        ) : (
          <>
            Your pipelines and CI jobs use these bearer tokens instead of your password (
            <code className="num">SIGHTLINE_TOKEN</code>). A token is shown once, when it is made;
            revoke any you no longer use.
          </>
        )
      }
    >
      <CreateToken me={me} users={all ? users.data?.items : undefined} />
      {tokens.isPending ? (
        <Loading what="tokens" />
      ) : tokens.isError ? (
        <ErrorNotice error={tokens.error} />
      ) : sorted.length === 0 ? (
        <Empty>
          No tokens yet. Give the first one a name above, then set it as{' '}
          <code className="num">SIGHTLINE_TOKEN</code> where <code className="num">sightline</code>{' '}
          runs.
        </Empty>
      ) : (
        <table className={tableClass}>
          <TableHead
            cells={[
              'Name',
              'Starts with',
              'May',
              all && 'Owner',
              'Created',
              'Last used',
              'Status',
              { label: 'Actions', hidden: true },
            ]}
          />
          <tbody>
            {sorted.map((t) => (
              <TokenRow key={t.id} t={t} owner={emailOf(t.user_id)} showOwner={all} />
            ))}
          </tbody>
        </table>
      )}
    </AdminSection>
  );
}
