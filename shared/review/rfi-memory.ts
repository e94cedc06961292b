// Interference channels remembered per receiver across scint runs (brief: "Persistent RFI
// channels are remembered across runs per receiver"), and the mask made from them.
import type { RfiMemory } from '../schemas/api.js';

/** A channel must be persistent in at least this many of the receiver's runs … */
export const RFI_MIN_RUNS = 2;
/** … and in at least this share of the runs that tested it. */
export const RFI_MIN_SHARE = 0.5;

export const RFI_RULE =
  `a channel is remembered when at least ${RFI_MIN_RUNS} of the receiver's scint runs flagged it ` +
  `persistent and those are at least ${RFI_MIN_SHARE * 100}% of the runs that tested it (runs ` +
  `whose band holds it, less those given it in a starting mask); channels of different runs ` +
  `are the same when within half a channel width`;

/** One of the receiver's scint runs: its band and channel width. */
export interface RfiRunBand {
  runId: string;
  freqMinMhz: number;
  freqMaxMhz: number;
  channelMhz: number;
}

/** One flagged channel of one run. */
export interface RfiFlag {
  runId: string;
  freqMhz: number;
  channelMhz: number;
  kind: 'persistent' | 'intermittent' | 'dead' | 'given';
}

const round6 = (x: number) => Math.round(x * 1e6) / 1e6;

/**
 * Group the flags of many runs into channels and apply the rule (RFI_RULE).
 *
 * Grouping: flags sorted by frequency; a flag joins the current group when it lies within half
 * a channel width (the larger of the two runs' channel widths) of the flag that opened the
 * group and its run is not in the group yet; otherwise it opens a new group. A group's
 * frequency is the mean of its flags'.
 *
 * Counting, per group: `persistent_runs` — runs that flagged it persistent; `flagged_runs` —
 * runs that flagged it from their data (persistent, intermittent or dead); `given_runs` — runs
 * that were handed it in a starting mask (`--mask`, `--mask-from-server`), which flag a channel
 * without testing it; `tested_runs` — runs whose band holds the frequency (to within half a
 * channel), less the given ones. Given runs are left out on purpose: otherwise every run
 * analysed with the remembered mask would count against the channels of that mask, and the
 * memory would wear itself away by being used.
 *
 * A channel is remembered (`persistent`) when persistent_runs ≥ RFI_MIN_RUNS and
 * persistent_runs ≥ RFI_MIN_SHARE · tested_runs.
 */
export function rememberRfi(receiver: string, runs: RfiRunBand[], flags: RfiFlag[]): RfiMemory {
  const sorted = [...flags]
    .filter((f) => Number.isFinite(f.freqMhz))
    .sort((a, b) => a.freqMhz - b.freqMhz || (a.runId < b.runId ? -1 : a.runId > b.runId ? 1 : 0));
  const groups: { anchor: RfiFlag; flags: RfiFlag[]; runs: Set<string> }[] = [];
  for (const f of sorted) {
    const g = groups.at(-1);
    if (
      g &&
      Math.abs(f.freqMhz - g.anchor.freqMhz) <= Math.max(f.channelMhz, g.anchor.channelMhz) / 2 &&
      !g.runs.has(f.runId)
    ) {
      g.flags.push(f);
      g.runs.add(f.runId);
    } else groups.push({ anchor: f, flags: [f], runs: new Set([f.runId]) });
  }

  const channels = groups.map((g) => {
    const freq = g.flags.reduce((s, f) => s + f.freqMhz, 0) / g.flags.length;
    const runsWith = (kinds: RfiFlag['kind'][]) =>
      new Set(g.flags.filter((f) => kinds.includes(f.kind)).map((f) => f.runId));
    const persistent = runsWith(['persistent']);
    const flagged = runsWith(['persistent', 'intermittent', 'dead']);
    const given = runsWith(['given']);
    const tested = new Set(flagged);
    for (const r of runs) {
      const half = r.channelMhz / 2;
      if (freq >= r.freqMinMhz - half && freq <= r.freqMaxMhz + half) tested.add(r.runId);
    }
    for (const id of given) tested.delete(id);
    const share = tested.size ? persistent.size / tested.size : 0;
    return {
      freq_mhz: round6(freq),
      persistent_runs: persistent.size,
      flagged_runs: flagged.size,
      given_runs: given.size,
      tested_runs: tested.size,
      share,
      persistent: persistent.size >= RFI_MIN_RUNS && share >= RFI_MIN_SHARE,
    };
  });
  return {
    receiver,
    runs: runs.length,
    rule: RFI_RULE,
    channels_mhz: channels.filter((c) => c.persistent).map((c) => c.freq_mhz),
    channels,
  };
}
