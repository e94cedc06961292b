import { useId, type ReactNode } from 'react';
import type { UseFormRegisterReturn } from 'react-hook-form';

/** API keys that can appear in a shared schema's message, as the form labels them. */
const LABELS: [RegExp, string][] = [
  [/\bwindow_days\b/g, 'Window'],
  [/\bgap_days\b/g, 'Gap'],
  [/\bref_freq_mhz\b/g, 'Reference frequency'],
  [/\balpha\b/g, 'α'],
  [/\bscatter\b/g, 'Scattering term'],
];
export const friendly = (message: string) =>
  LABELS.reduce((m, [re, label]) => m.replace(re, label), message);

/** '' means "left at the default" (undefined); anything else must read as a number. */
export const toNumber = (v: unknown) =>
  v === '' || v === undefined || v === null ? undefined : Number(String(v).trim());
/** '' means "left at the default" for selects too. */
export const toChoice = (v: unknown) => (v === '' || v === undefined ? undefined : v);

interface ShellProps {
  id: string;
  label: ReactNode;
  hint?: ReactNode;
  error?: string;
  children: ReactNode;
}

function Shell({ id, label, hint, error, children }: ShellProps) {
  return (
    <div className="flex flex-col gap-1">
      <label htmlFor={id} className="text-sm font-medium">
        {label}
      </label>
      {children}
      {hint && !error && (
        <p id={`${id}-hint`} className="text-xs text-ink-soft">
          {hint}
        </p>
      )}
      {error && (
        <p id={`${id}-error`} className="text-xs text-alert">
          {friendly(error)}
        </p>
      )}
    </div>
  );
}

const describedBy = (id: string, hint: unknown, error: unknown) =>
  error ? `${id}-error` : hint ? `${id}-hint` : undefined;

interface NumberInputProps {
  label: ReactNode;
  hint?: ReactNode;
  error?: string;
  placeholder?: string;
  registration: UseFormRegisterReturn;
  integer?: boolean;
}

/** A labelled number field bound to react-hook-form; its message shows under it. */
export function NumberInput({
  label,
  hint,
  error,
  placeholder,
  registration,
  integer,
}: NumberInputProps) {
  const id = useId();
  return (
    <Shell id={id} label={label} hint={hint} error={error}>
      <input
        id={id}
        type="text"
        inputMode={integer ? 'numeric' : 'decimal'}
        autoComplete="off"
        spellCheck={false}
        placeholder={placeholder}
        aria-invalid={error ? true : undefined}
        aria-describedby={describedBy(id, hint, error)}
        className={`num w-full rounded-sm border bg-panel px-2 py-1.5 text-right text-sm placeholder:text-ink-soft ${
          error ? 'border-alert' : 'border-edge'
        }`}
        {...registration}
      />
    </Shell>
  );
}

interface SelectInputProps {
  label: ReactNode;
  hint?: ReactNode;
  error?: string;
  options: { value: string; label: string }[];
  registration: UseFormRegisterReturn;
}

export function SelectInput({ label, hint, error, options, registration }: SelectInputProps) {
  const id = useId();
  return (
    <Shell id={id} label={label} hint={hint} error={error}>
      <select
        id={id}
        aria-invalid={error ? true : undefined}
        aria-describedby={describedBy(id, hint, error)}
        className={`w-full rounded-sm border bg-panel px-2 py-1.5 text-sm ${
          error ? 'border-alert' : 'border-edge'
        }`}
        {...registration}
      >
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
    </Shell>
  );
}

/** A unit after a label, quieter than the label itself. */
export function Unit({ children }: { children: ReactNode }) {
  return <span className="font-normal text-ink-soft">({children})</span>;
}
