import type { DispersionReport } from '../lib/dispersion-report';
import { fixed, formatDuration, formatSeconds } from '../lib/format';

const K_UNIT = 's MHz² pc⁻¹ cm³';

export function DispersionTable({ report }: { report: DispersionReport }) {
  const { constant, rows } = report;
  return (
    <table className="w-full border-collapse text-sm">
      <caption className="pb-3 text-left text-sm text-ink-soft">
        Constant used: <span className="font-medium text-ink">{constant.name}</span>, K ={' '}
        <span className="num text-ink">{fixed(constant.value, 6)}</span> {K_UNIT}
      </caption>
      <thead>
        <tr className="border-b border-rule text-left text-xs font-medium text-ink-soft">
          <th scope="col" className="py-1.5 pr-3 font-medium">
            Quantity
          </th>
          <th scope="col" className="py-1.5 pr-3 text-right font-medium">
            Frequency (MHz)
          </th>
          <th scope="col" className="py-1.5 pr-1 text-right font-medium">
            Value
          </th>
          <th scope="col" className="py-1.5 pr-3 font-medium">
            <span className="sr-only">Unit</span>
          </th>
          <th scope="col" className="py-1.5 text-right font-medium">
            Seconds
          </th>
        </tr>
      </thead>
      <tbody>
        {rows.map((r) => {
          const d = formatDuration(r.valueS);
          return (
            <tr key={r.key} className="border-b border-rule/60 last:border-b-0">
              <th scope="row" className="py-1.5 pr-3 text-left font-normal">
                {r.quantity}
              </th>
              <td className="num py-1.5 pr-3 text-right">{r.freqLabel}</td>
              <td className="num py-1.5 pr-1 text-right font-medium">{d.text}</td>
              <td className="num py-1.5 pr-3 text-ink-soft">{d.unit}</td>
              <td className="num py-1.5 text-right text-ink-soft">{formatSeconds(r.valueS)}</td>
            </tr>
          );
        })}
      </tbody>
    </table>
  );
}
