import { useId } from 'react';

interface NumberFieldProps {
  label: string;
  unit: string;
  value: string;
  onChange: (text: string) => void;
  /** shown under the field and announced with it when set */
  error?: string;
}

/** A labelled numeric text field that shows its own validation message. */
export function NumberField({ label, unit, value, onChange, error }: NumberFieldProps) {
  const id = useId();
  const errorId = `${id}-error`;
  return (
    <div className="flex flex-col gap-1">
      <label htmlFor={id} className="text-sm font-medium">
        {label} <span className="font-normal text-ink-soft">({unit})</span>
      </label>
      <input
        id={id}
        type="text"
        inputMode="decimal"
        autoComplete="off"
        spellCheck={false}
        value={value}
        onChange={(e) => onChange(e.target.value)}
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? errorId : undefined}
        className={`num w-full rounded border bg-panel px-2 py-1.5 text-right text-sm ${
          error ? 'border-alert' : 'border-edge'
        }`}
      />
      {error && (
        <p id={errorId} className="text-xs text-alert">
          {error}
        </p>
      )}
    </div>
  );
}
