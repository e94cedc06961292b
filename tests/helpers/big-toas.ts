// A large arrival-time residual table (interfaces.md "Arrival-time table", CSV) written fast
// for memory tests: every line is a few precomputed pieces joined, and the file is written in
// chunks of several megabytes. Shaped like a long-running timing array: `sources` invented
// pulsars, each visited every 7 days, every visit seen by the three receivers of the demo
// observatory (demo-scenario.md: low, mid, high) in `channels` frequency channels each.
import { closeSync, openSync, writeSync } from 'node:fs';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { createRng } from '../../shared/sim/random.js';

export interface BigToasSpec {
  sources: number;
  visitsPerSource: number;
  /** channels per receiver, low / mid / high */
  channels: [number, number, number];
  seed?: number;
}

export interface BigToas {
  rows: number;
  visits: number;
  bytes: number;
  sourceName(s: number): string;
  /** the DM offset injected into visit v of source s, pc cm⁻³ */
  ddm(s: number, v: number): number;
  /** the source number and visit number of a fitted visit, from its source and first MJD */
  visitOf(source: string, mjdFirst: number): { s: number; v: number };
}

const BANDS: Array<[string, number, number]> = [
  ['low', 550, 900],
  ['mid', 1150, 1750],
  ['high', 2100, 3400],
];
/** constant per-receiver timing offsets, µs (invented) */
const RECEIVER_OFFSET_US = [0.8, -0.3, 0.45];
const FIRST_DAY = 53000;
const DAYS_BETWEEN_VISITS = 7;
/** arrival times of one visit are this many seconds apart */
const STEP_S = 4;

/** Write all of a (plain ASCII) text: writeSync may write less than asked. */
function writeAll(fd: number, text: string): number {
  const data = Buffer.from(text, 'latin1');
  let done = 0;
  while (done < data.length) done += writeSync(fd, data, done, data.length - done);
  return data.length;
}

export function writeBigToas(path: string, spec: BigToasSpec): BigToas {
  const k = dispersionConstant('conventional').value;
  // white noise of each row's quoted error: seeded Gaussian deviates (shared/sim/random.ts)
  const rng = createRng(spec.seed ?? 2024);

  interface Channel {
    text: string;
    receiver: number;
    errUs: number;
    /** K·10⁶/ν² (µs per pc cm⁻³) */
    sweep: number;
  }
  const channels: Channel[] = [];
  BANDS.forEach(([, lo, hi], r) => {
    const n = spec.channels[r];
    for (let c = 0; c < n; c++) {
      const f = n === 1 ? lo : lo + ((hi - lo) * c) / (n - 1);
      const freq = f.toFixed(3);
      const errUs = 0.4 + ((c * 37 + r * 11) % 10) * 0.1;
      const err = errUs.toFixed(2);
      channels.push({
        text: `,${freq},${err},`,
        receiver: r,
        errUs: Number(err),
        sweep: (k * 1e6) / Number(freq) ** 2,
      });
    }
  });
  const receiverTail = BANDS.map(([name]) => `,${name}\n`);
  const sourceName = (s: number) => `SIM-${String(s + 1).padStart(3, '0')}`;
  const ddm = (s: number, v: number) =>
    1e-3 * (1 + (s % 5)) * Math.sin((2 * Math.PI * (v + 3 * s)) / 61);
  // each source has its own time of day; a visit spans channels × STEP_S seconds
  const startSec = (s: number) => 600 + ((s * 797) % 80000);
  const visitOf = (source: string, mjdFirst: number) => ({
    s: Number(source.slice(4)) - 1,
    v: Math.floor((mjdFirst - FIRST_DAY) / DAYS_BETWEEN_VISITS),
  });

  // the same for every visit of a source: its time of day, as 15 decimals of the day (an
  // integer below 10¹⁵, exact in a double), then the channel's frequency and error
  const middle = Array.from({ length: spec.sources }, (_, s) =>
    channels.map((ch, j) => {
      const frac = Math.round(((startSec(s) + STEP_S * j + 0.125) / 86400) * 1e15);
      return String(frac).padStart(15, '0') + ch.text;
    }),
  );

  const fd = openSync(path, 'w');
  let bytes = 0;
  let rows = 0;
  try {
    let buf = 'source,mjd,freq_mhz,err_us,residual_us,receiver\n';
    for (let v = 0; v < spec.visitsPerSource; v++) {
      const day = FIRST_DAY + DAYS_BETWEEN_VISITS * v;
      for (let s = 0; s < spec.sources; s++) {
        const head = `${sourceName(s)},${day}.`;
        const dm = ddm(s, v);
        const mid = middle[s];
        for (let j = 0; j < channels.length; j++) {
          const ch = channels[j];
          const resid = RECEIVER_OFFSET_US[ch.receiver] + dm * ch.sweep + ch.errUs * rng.normal();
          buf += head + mid[j] + resid.toFixed(4) + receiverTail[ch.receiver];
          rows++;
        }
        if (buf.length > 1 << 23) {
          bytes += writeAll(fd, buf);
          buf = '';
        }
      }
    }
    bytes += writeAll(fd, buf);
  } finally {
    closeSync(fd);
  }
  return {
    rows,
    visits: spec.sources * spec.visitsPerSource,
    bytes,
    sourceName,
    ddm,
    visitOf,
  };
}
