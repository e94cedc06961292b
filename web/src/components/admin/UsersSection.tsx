import { zodResolver } from '@hookform/resolvers/zod';
import { useId, useState } from 'react';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { createUserBody, ROLE_NAMES } from '../../../../shared/schemas/api';
import {
  useCreateUser,
  useUpdateUser,
  useUsers,
  type CreateUserInput,
  type UserView,
} from '../../api/admin';
import type { Me, Role } from '../../api/types';
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

const ROLE_HINT: Record<Role, string> = {
  viewer: 'reads and downloads runs',
  analyst: 'pushes, uploads, submits own runs',
  lead: 'also approves or returns runs',
  admin: 'users, tokens, audit log, mail',
};

function UserRow({ u, me, onError }: { u: UserView; me: Me; onError: (e: unknown) => void }) {
  const update = useUpdateUser();
  const emailId = useId();
  const self = u.id === me.id;
  const save = (b: { role?: Role; disabled?: boolean }) =>
    update.mutate({ id: u.id, ...b }, { onError, onSuccess: () => onError(undefined) });
  return (
    <tr className={`border-b border-rule last:border-0 ${u.disabled ? 'text-ink-soft' : ''}`}>
      <td className={td}>
        <span id={emailId}>{u.email}</span>
        {self && <span className="ml-2 text-xs text-ink-soft">(you)</span>}
      </td>
      <td className={td}>{u.name}</td>
      <td className={td}>
        <select
          aria-label={`Role for ${u.email}`}
          value={update.isPending && update.variables?.role ? update.variables.role : u.role}
          disabled={update.isPending}
          onChange={(e) => save({ role: e.target.value as Role })}
          className={`${inputClass} py-0.5`}
        >
          {ROLE_NAMES.map((r) => (
            <option key={r} value={r}>
              {r}
            </option>
          ))}
        </select>
      </td>
      <td className={td}>
        {u.disabled ? (
          <span className="font-medium text-state-returned">disabled</span>
        ) : (
          <span className="text-state-approved">active</span>
        )}
      </td>
      <td className={`${td} num text-xs text-ink-soft`}>{dateTime(u.created_at)}</td>
      <td className={`${td} text-right`}>
        <button
          type="button"
          className={buttonClass}
          disabled={update.isPending}
          aria-describedby={emailId}
          onClick={() => save({ disabled: !u.disabled })}
        >
          {u.disabled ? 'Enable' : 'Disable'}
        </button>
      </td>
    </tr>
  );
}

type UserForm = z.input<typeof createUserBody>;

function CreateUser() {
  const create = useCreateUser();
  const [made, setMade] = useState<{ email: string; password?: string }>();
  const ids = { email: useId(), name: useId(), role: useId(), password: useId() };
  const {
    register,
    handleSubmit,
    reset,
    formState: { errors, isValid },
  } = useForm<UserForm, unknown, z.output<typeof createUserBody>>({
    resolver: zodResolver(createUserBody),
    mode: 'onChange',
    defaultValues: { email: '', name: '', role: 'analyst' },
  });
  const submit = handleSubmit((b) =>
    create.mutate(b as CreateUserInput, {
      onSuccess: (u) => {
        setMade({ email: u.email, password: u.initial_password });
        reset();
      },
    }),
  );
  const err = (k: keyof UserForm, id: string) =>
    errors[k] && (
      <p id={`${id}-error`} className="text-xs text-alert">
        {errors[k]?.message}
      </p>
    );
  const aria = (k: keyof UserForm, id: string) => ({
    'aria-invalid': errors[k] ? true : undefined,
    'aria-describedby': errors[k] ? `${id}-error` : undefined,
  });
  return (
    <div className="flex flex-col gap-3">
      <h3 className="text-sm font-semibold">Add a person or a robot account</h3>
      <form
        noValidate
        onSubmit={submit}
        className="grid gap-3 rounded-sm border border-rule bg-panel p-3 sm:grid-cols-[1.4fr_1fr_0.8fr_1fr_auto] sm:items-start"
      >
        <div className="flex flex-col gap-1">
          <label htmlFor={ids.email} className="text-sm font-medium">
            E-mail
          </label>
          <input
            id={ids.email}
            type="email"
            autoComplete="off"
            className={inputClass}
            {...aria('email', ids.email)}
            {...register('email')}
          />
          {err('email', ids.email)}
        </div>
        <div className="flex flex-col gap-1">
          <label htmlFor={ids.name} className="text-sm font-medium">
            Name
          </label>
          <input
            id={ids.name}
            autoComplete="off"
            className={inputClass}
            {...aria('name', ids.name)}
            {...register('name')}
          />
          {err('name', ids.name)}
        </div>
        <div className="flex flex-col gap-1">
          <label htmlFor={ids.role} className="text-sm font-medium">
            Role
          </label>
          <select id={ids.role} className={inputClass} {...register('role')}>
            {ROLE_NAMES.map((r) => (
              <option key={r} value={r}>
                {r}
              </option>
            ))}
          </select>
          {err('role', ids.role)}
        </div>
        <div className="flex flex-col gap-1">
          <label htmlFor={ids.password} className="text-sm font-medium">
            Password <span className="font-normal text-ink-soft">(optional)</span>
          </label>
          <input
            id={ids.password}
            type="password"
            autoComplete="new-password"
            className={inputClass}
            aria-invalid={errors.password ? true : undefined}
            aria-describedby={errors.password ? `${ids.password}-error` : `${ids.password}-hint`}
            {...register('password', { setValueAs: (v: string) => (v === '' ? undefined : v) })}
          />
          {err('password', ids.password) ?? (
            <p id={`${ids.password}-hint`} className="text-xs text-ink-soft">
              Empty: one is generated and shown once.
            </p>
          )}
        </div>
        <button
          type="submit"
          disabled={!isValid || create.isPending}
          className={`${primaryClass} sm:mt-6`}
        >
          {create.isPending ? 'Adding…' : 'Add user'}
        </button>
      </form>
      {create.isError && <ErrorNotice error={create.error} />}
      {made &&
        (made.password ? (
          <SecretOnce
            label="Initial password"
            secret={made.password}
            onDismiss={() => setMade(undefined)}
          >
            <strong>{made.email}</strong> was added. Their initial password is below: hand it over
            privately and ask them to change it.
          </SecretOnce>
        ) : (
          <p role="status" className="text-sm">
            <strong>{made.email}</strong> was added with the password you chose.{' '}
            <button
              type="button"
              className="text-accent underline"
              onClick={() => setMade(undefined)}
            >
              Dismiss
            </button>
          </p>
        ))}
    </div>
  );
}

export function UsersSection({ me }: { me: Me }) {
  const users = useUsers();
  const [rowError, setRowError] = useState<unknown>();
  return (
    <AdminSection
      id="admin-users"
      title="Users"
      intro={
        <>
          Roles: {ROLE_NAMES.map((r) => `${r} (${ROLE_HINT[r]})`).join('; ')}. A disabled account
          loses its sessions at once and its tokens are refused. You cannot demote or disable
          yourself.
        </>
      }
    >
      {users.isPending ? (
        <Loading what="users" />
      ) : users.isError ? (
        <ErrorNotice error={users.error} />
      ) : users.data.items.length === 0 ? (
        <Empty>No users yet. Add the first one below.</Empty>
      ) : (
        <table className={tableClass}>
          <TableHead
            cells={[
              'E-mail',
              'Name',
              'Role',
              'Status',
              'Created',
              { label: 'Actions', hidden: true },
            ]}
          />
          <tbody>
            {users.data.items.map((u) => (
              <UserRow key={u.id} u={u} me={me} onError={setRowError} />
            ))}
          </tbody>
        </table>
      )}
      {rowError !== undefined && <ErrorNotice error={rowError} />}
      <CreateUser />
    </AdminSection>
  );
}
