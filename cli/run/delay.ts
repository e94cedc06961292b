import {
  delayToInfinityS,
  delayBetweenS,
  channelSmearingS,
} from '../../shared/physics/dispersion.js';
import type { DelayResult } from '../../shared/schemas/delay.js';
import {
  constantOf,
  formatOf,
  numberOption,
  positive,
  SOFTWARE,
  type CommonOptions,
} from '../common.js';
import { csv, fmt, json, table } from '../render.js';
import { writeOutput } from '../io/output.js';

export interface DelayOptions extends CommonOptions {
  dm: number;
  freq: number[];
  ref?: string;
  channelWidth?: number;
}

export function computeDelay(o: DelayOptions): DelayResult {
  const k = constantOf(o);
  let refMhz: number | null = null;
  if (o.ref !== undefined && o.ref.toLowerCase() !== 'inf')
    refMhz = numberOption('--ref', positive)(o.ref);
  const rows = o.freq.map((f) => ({
    freq_mhz: f,
    ref_mhz: refMhz,
    delay_s: refMhz === null ? delayToInfinityS(k, o.dm, f) : delayBetweenS(k, o.dm, f, refMhz),
    ...(o.channelWidth !== undefined
      ? { smearing_s: channelSmearingS(k, o.dm, f, o.channelWidth) }
      : {}),
  }));
  // typed by the shared schema; tests validate the output with it (zod stays off this cold path)
  const result: DelayResult = {
    schema: 'sightline/delay@1',
    software: SOFTWARE,
    constant: k,
    input: [],
    dm: o.dm,
    ...(o.channelWidth !== undefined ? { channel_width_mhz: o.channelWidth } : {}),
    rows,
  };
  return result;
}

export async function runDelay(o: DelayOptions): Promise<void> {
  const r = computeDelay(o);
  const fmtName = formatOf(o);
  const ref = (v: number | null) => (v === null ? 'inf' : v);
  const head = [
    'freq_mhz',
    'ref_mhz',
    'delay_s',
    ...(o.channelWidth !== undefined ? ['smearing_s'] : []),
  ];
  const rows = r.rows.map((x) => [
    x.freq_mhz,
    ref(x.ref_mhz),
    x.delay_s,
    ...(x.smearing_s !== undefined ? [x.smearing_s] : []),
  ]);
  let text: string;
  if (fmtName === 'json') text = json(r);
  else if (fmtName === 'csv') text = csv(head, rows);
  else {
    text =
      `DM ${fmt(r.dm)} pc cm⁻³ · constant ${r.constant.name} (K = ${r.constant.value.toFixed(4)} s MHz² pc⁻¹ cm³)\n` +
      table(
        [
          'freq (MHz)',
          'ref (MHz)',
          'delay (ms)',
          ...(o.channelWidth !== undefined ? ['smearing (µs)'] : []),
        ],
        r.rows.map((x) => [
          x.freq_mhz,
          ref(x.ref_mhz),
          x.delay_s * 1e3,
          ...(x.smearing_s !== undefined ? [x.smearing_s * 1e6] : []),
        ]),
        [0, 1, 2, 3],
      );
  }
  await writeOutput(o.out, text);
}
