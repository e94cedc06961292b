import {
  dispersionConstant,
  type ConstantName,
  type DispersionConstant,
} from '../../../shared/physics/constants';
import {
  channelSmearingS,
  delayBetweenS,
  delayToInfinityS,
} from '../../../shared/physics/dispersion';

export interface DispersionInputs {
  dm: number;
  lowMhz: number;
  highMhz: number;
  channelWidthMhz: number;
  constant: ConstantName;
}

export interface DispersionRow {
  key: string;
  quantity: string;
  /** where the quantity is evaluated, e.g. "400" or "400 → 1400" */
  freqLabel: string;
  valueS: number;
}

export interface DispersionReport {
  constant: DispersionConstant;
  rows: DispersionRow[];
  /** Δν/ν at the low edge; the smearing formula is first order in it */
  channelFraction: number;
}

/** Every number the calculator shows, from the project's own physics in shared/. */
export function dispersionReport(i: DispersionInputs): DispersionReport {
  const k = dispersionConstant(i.constant);
  const lo = String(i.lowMhz);
  const hi = String(i.highMhz);
  return {
    constant: k,
    channelFraction: i.channelWidthMhz / i.lowMhz,
    rows: [
      {
        key: 'inf-low',
        quantity: 'Delay to infinite frequency',
        freqLabel: lo,
        valueS: delayToInfinityS(k, i.dm, i.lowMhz),
      },
      {
        key: 'inf-high',
        quantity: 'Delay to infinite frequency',
        freqLabel: hi,
        valueS: delayToInfinityS(k, i.dm, i.highMhz),
      },
      {
        key: 'sweep',
        quantity: 'Band sweep',
        freqLabel: `${lo} → ${hi}`,
        valueS: delayBetweenS(k, i.dm, i.lowMhz, i.highMhz),
      },
      {
        key: 'smear-low',
        quantity: 'Intra-channel smearing',
        freqLabel: lo,
        valueS: channelSmearingS(k, i.dm, i.lowMhz, i.channelWidthMhz),
      },
      {
        key: 'smear-high',
        quantity: 'Intra-channel smearing',
        freqLabel: hi,
        valueS: channelSmearingS(k, i.dm, i.highMhz, i.channelWidthMhz),
      },
    ],
  };
}
