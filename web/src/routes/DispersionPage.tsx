import { useState } from 'react';
import type { ConstantName } from '../../../shared/physics/constants';
import { ConstantChoice } from '../components/ConstantChoice';
import { DispersionTable } from '../components/DispersionTable';
import { Formulas } from '../components/Formulas';
import { NumberField } from '../components/NumberField';
import { dispersionReport } from '../lib/dispersion-report';
import { fixed } from '../lib/format';
import { parsePositive } from '../lib/parse-number';

/** Above this Δν/ν the first-order smearing formula starts to under-state the sweep. */
const SMEARING_FRACTION_NOTE = 0.05;

export function DispersionPage() {
  const [dmText, setDmText] = useState('50');
  const [lowText, setLowText] = useState('400');
  const [highText, setHighText] = useState('1400');
  const [widthText, setWidthText] = useState('1');
  const [constant, setConstant] = useState<ConstantName>('conventional');

  const dm = parsePositive(dmText);
  const low = parsePositive(lowText);
  const high = parsePositive(highText);
  const width = parsePositive(widthText);
  const highError = !high.ok
    ? high.message
    : low.ok && high.value <= low.value
      ? `Must be above the low frequency (${low.value} MHz).`
      : undefined;

  const inputs =
    dm.ok && low.ok && high.ok && width.ok && !highError
      ? {
          dm: dm.value,
          lowMhz: low.value,
          highMhz: high.value,
          channelWidthMhz: width.value,
          constant,
        }
      : undefined;
  const report = inputs ? dispersionReport(inputs) : undefined;

  return (
    <div className="flex flex-col gap-5">
      <div>
        <h1 className="text-xl font-semibold tracking-tight">Dispersion calculator</h1>
        <p className="mt-1 text-sm text-ink-soft">
          Cold-plasma delays for one DM: each band edge to infinite frequency, the sweep across the
          band, and the smearing inside one channel.
        </p>
      </div>

      <div className="grid items-start gap-5 md:grid-cols-[17rem_1fr]">
        <form
          aria-label="Dispersion inputs"
          onSubmit={(e) => e.preventDefault()}
          className="flex flex-col gap-4 rounded border border-rule bg-panel p-4"
        >
          <NumberField
            label="DM"
            unit="pc cm⁻³"
            value={dmText}
            onChange={setDmText}
            error={dm.ok ? undefined : dm.message}
          />
          <NumberField
            label="Low frequency"
            unit="MHz"
            value={lowText}
            onChange={setLowText}
            error={low.ok ? undefined : low.message}
          />
          <NumberField
            label="High frequency"
            unit="MHz"
            value={highText}
            onChange={setHighText}
            error={highError}
          />
          <NumberField
            label="Channel width"
            unit="MHz"
            value={widthText}
            onChange={setWidthText}
            error={width.ok ? undefined : width.message}
          />
          <ConstantChoice value={constant} onChange={setConstant} />
        </form>

        <section
          aria-labelledby="results-heading"
          className="rounded border border-rule bg-panel p-4"
        >
          <h2 id="results-heading" className="mb-2 text-sm font-semibold">
            Delays
          </h2>
          {report ? (
            <>
              <DispersionTable report={report} />
              {report.channelFraction > SMEARING_FRACTION_NOTE && (
                <p className="mt-3 text-xs text-state-in-review">
                  The channel is {fixed(report.channelFraction * 100, 1)} % of the low frequency;
                  the smearing figure is first order in Δν/ν and only holds for narrow channels.
                </p>
              )}
              <Formulas />
            </>
          ) : (
            <p role="status" className="text-sm text-ink-soft">
              Fix the fields that show a message to see the delays.
            </p>
          )}
        </section>
      </div>
    </div>
  );
}
