import { useId, useState } from 'react';
import { useController, useFormContext, useWatch } from 'react-hook-form';
import type { AnalysisKind } from '../../../../shared/schemas/analysis';
import type { ConstantName } from '../../../../shared/physics/constants';
import { NumberInput, SelectInput, toChoice, toNumber, Unit } from './fields';

/** The form's values: the analysis kind and the options of that kind (shared/schemas/analysis.ts). */
export interface AnalysisFormValues {
  kind: AnalysisKind;
  params: {
    window_days?: number;
    gap_days?: number;
    clip_sigma?: number;
    period_s?: number;
    evolution?: number;
    scatter?: 'none' | 'fixed' | 'free';
    alpha?: number | 'free';
    ref_freq_mhz?: number;
    constant?: ConstantName;
    smooth?: 'none' | 'gp';
    model?: 'gauss' | 'gauss2' | 'gauss3';
    dm?: number;
  };
}

function useParams() {
  const {
    register,
    formState: { errors },
  } = useFormContext<AnalysisFormValues>();
  return { register, errors: errors.params ?? {} };
}

type NumberParamName =
  | 'window_days'
  | 'gap_days'
  | 'clip_sigma'
  | 'period_s'
  | 'evolution'
  | 'alpha'
  | 'ref_freq_mhz'
  | 'dm';

/** A number option of the analysis: labelled (with its unit), bound to `params.<name>`. */
function NumberParam({
  name,
  label,
  unit,
  placeholder,
  hint,
  integer,
  deps,
}: {
  name: NumberParamName;
  label: string;
  unit?: string;
  placeholder?: string;
  hint?: string;
  integer?: boolean;
  /** options re-validated when this one changes */
  deps?: `params.${NumberParamName}`[];
}) {
  const { register, errors } = useParams();
  return (
    <NumberInput
      label={
        unit ? (
          <>
            {label} <Unit>{unit}</Unit>
          </>
        ) : (
          label
        )
      }
      placeholder={placeholder}
      integer={integer}
      hint={hint}
      error={errors[name]?.message}
      registration={register(`params.${name}`, { setValueAs: toNumber, deps })}
    />
  );
}

const CONSTANT_OPTIONS = [
  { value: 'conventional', label: 'conventional (1 / 2.41×10⁻⁴)' },
  { value: 'physical', label: 'physical (CODATA 2018)' },
];

function Grouping() {
  return (
    <>
      <NumberParam
        name="window_days"
        label="Window"
        unit="days"
        hint="Fixed DM windows of this length. Leave empty to group by gaps."
        deps={['params.gap_days']}
      />
      <NumberParam
        name="gap_days"
        label="Gap"
        unit="days"
        placeholder="0.5"
        hint="A new visit starts after a gap longer than this (default 0.5)."
        deps={['params.window_days']}
      />
    </>
  );
}

function Constant() {
  const { register, errors } = useParams();
  return (
    <SelectInput
      label="Dispersion constant"
      hint="Conventional is the timing convention; the choice is recorded with the result."
      error={errors.constant?.message}
      options={CONSTANT_OPTIONS}
      registration={register('params.constant', { setValueAs: toChoice })}
    />
  );
}

function DmFitFields() {
  const { register, errors } = useParams();
  const { control } = useFormContext<AnalysisFormValues>();
  const scatter = useWatch({ control, name: 'params.scatter' }) ?? 'none';
  return (
    <>
      <Grouping />
      <NumberParam
        name="clip_sigma"
        label="Clip at"
        unit="σ"
        placeholder="off"
        hint="Drop the worst arrival time beyond this many σ, repeatedly (1–100)."
      />
      <NumberParam
        name="period_s"
        label="Pulse period"
        unit="s"
        placeholder="none"
        hint="Arrival-time offsets are taken modulo the period (a period_s column wins)."
      />
      <NumberParam
        name="evolution"
        label="Profile evolution"
        unit="polynomial degree"
        placeholder="0"
        integer
        hint="Terms in log₁₀(ν / 1 GHz), 0–5."
      />
      <SelectInput
        label="Scattering term"
        hint="A chromatic fit adds S·(ν/ν_ref)^−α and compares models."
        error={errors.scatter?.message}
        options={[
          { value: 'none', label: 'none (DM only)' },
          { value: 'fixed', label: 'fixed α' },
          { value: 'free', label: 'free α' },
        ]}
        registration={register('params.scatter', { deps: ['params.alpha'] })}
      />
      {scatter === 'fixed' && (
        <NumberParam
          name="alpha"
          label="α"
          placeholder="4.4"
          hint="Frequency index of τ, held fixed (default 4.4, Kolmogorov)."
        />
      )}
      {scatter !== 'none' && (
        <NumberParam
          name="ref_freq_mhz"
          label="Reference frequency"
          unit="MHz"
          placeholder="1000"
        />
      )}
      <Constant />
    </>
  );
}

function DmSeriesFields() {
  const { register, errors } = useParams();
  return (
    <>
      <Grouping />
      <SelectInput
        label="Smoothing"
        error={errors.smooth?.message}
        options={[
          { value: 'none', label: 'none' },
          { value: 'gp', label: 'gp (Gaussian-process regression)' },
        ]}
        registration={register('params.smooth')}
      />
      <Constant />
    </>
  );
}

/** α of τ(ν): fitted, or held at a value the analyst types. */
function ScatterAlpha() {
  const { control } = useFormContext<AnalysisFormValues>();
  const { field, fieldState } = useController({ control, name: 'params.alpha' });
  const [mode, setMode] = useState<'free' | 'fixed'>(
    typeof field.value === 'number' ? 'fixed' : 'free',
  );
  const [text, setText] = useState(typeof field.value === 'number' ? String(field.value) : '4.4');
  const valueOf = (t: string) => (t.trim() === '' ? NaN : Number(t.trim()));
  const modeId = useId();
  const valueId = useId();
  const error = fieldState.error?.message;
  return (
    <div className="flex flex-col gap-1">
      <label htmlFor={modeId} className="text-sm font-medium">
        α
      </label>
      <div className="flex gap-2">
        <select
          id={modeId}
          value={mode}
          onChange={(e) => {
            const m = e.target.value as 'free' | 'fixed';
            setMode(m);
            field.onChange(m === 'free' ? 'free' : valueOf(text));
          }}
          className="rounded-sm border border-edge bg-panel px-2 py-1.5 text-sm"
        >
          <option value="free">fitted (free)</option>
          <option value="fixed">held at</option>
        </select>
        {mode === 'fixed' && (
          <>
            <label htmlFor={valueId} className="sr-only">
              α held at
            </label>
            <input
              id={valueId}
              ref={field.ref}
              type="text"
              inputMode="decimal"
              autoComplete="off"
              value={text}
              onChange={(e) => {
                setText(e.target.value);
                field.onChange(valueOf(e.target.value));
              }}
              onBlur={field.onBlur}
              aria-invalid={error ? true : undefined}
              aria-describedby={error ? `${valueId}-error` : undefined}
              className={`num w-24 rounded-sm border bg-panel px-2 py-1.5 text-right text-sm ${
                error ? 'border-alert' : 'border-edge'
              }`}
            />
          </>
        )}
      </div>
      {error ? (
        <p id={`${valueId}-error`} className="text-xs text-alert">
          {error}
        </p>
      ) : (
        <p className="text-xs text-ink-soft">τ ∝ ν^−α; 4.4 is the Kolmogorov value.</p>
      )}
    </div>
  );
}

function ScatterFitFields() {
  const { register, errors } = useParams();
  return (
    <>
      <SelectInput
        label="Model"
        hint="The intrinsic pulse, convolved with a one-sided exponential tail."
        error={errors.model?.message}
        options={[
          { value: 'gauss', label: 'gauss (one Gaussian)' },
          { value: 'gauss2', label: 'gauss2 (two Gaussians)' },
          { value: 'gauss3', label: 'gauss3 (three Gaussians)' },
        ]}
        registration={register('params.model')}
      />
      <ScatterAlpha />
      <NumberParam
        name="ref_freq_mhz"
        label="Reference frequency"
        unit="MHz"
        placeholder="1000"
        hint="Where τ of the power law is quoted."
      />
      <NumberParam
        name="dm"
        label="DM"
        unit="pc cm⁻³"
        placeholder="from file"
        hint="For the comparison with the empirical τ–DM relation."
      />
    </>
  );
}

/** The options the chosen analysis takes: exactly those its shared schema allows. */
export function ParamFields({ kind }: { kind: AnalysisKind }) {
  return (
    <div className="grid gap-4 sm:grid-cols-2">
      {kind === 'dm-fit' && <DmFitFields />}
      {kind === 'dm-series' && <DmSeriesFields />}
      {kind === 'scatter-fit' && <ScatterFitFields />}
    </div>
  );
}
