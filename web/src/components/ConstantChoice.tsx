import { useId } from 'react';
import {
  CONSTANT_NAMES,
  DISPERSION_CONSTANTS,
  type ConstantName,
} from '../../../shared/physics/constants';
import { fixed } from '../lib/format';

const ORIGIN: Record<ConstantName, string> = {
  conventional: '1 / 2.41×10⁻⁴, the timing convention',
  physical: 'e² / (8π² ε₀ mₑ c), CODATA 2018',
};

interface ConstantChoiceProps {
  value: ConstantName;
  onChange: (name: ConstantName) => void;
}

export function ConstantChoice({ value, onChange }: ConstantChoiceProps) {
  const name = useId();
  return (
    <fieldset className="flex flex-col gap-2">
      <legend className="mb-1 text-sm font-medium">Dispersion constant</legend>
      {CONSTANT_NAMES.map((c) => (
        <label key={c} className="flex cursor-pointer items-start gap-2 text-sm">
          <input
            type="radio"
            name={name}
            value={c}
            checked={value === c}
            onChange={() => onChange(c)}
            className="mt-1 accent-accent"
          />
          <span>
            <span className="font-medium">{c}</span>{' '}
            <span className="text-ink-soft">
              K = <span className="num">{fixed(DISPERSION_CONSTANTS[c], 4)}</span>
            </span>
            <span className="block text-xs text-ink-soft">{ORIGIN[c]}</span>
          </span>
        </label>
      ))}
    </fieldset>
  );
}
