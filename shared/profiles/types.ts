/** One band's pulse profile: intensity in phase bins over one rotation. */
export interface BandProfile {
  freqMhz: number;
  bins: Float64Array;
  /** off-pulse noise σ per bin, when the producer knows it (else estimated from the data) */
  noise?: number;
}

/** The profiles of one visit, one per band (interfaces.md "Profiles"). */
export interface ProfileSet {
  source: string;
  /** visit epoch as decimal text */
  mjd: string;
  periodS: number;
  /** the pulsar's DM when the producer gives it (for the empirical τ–DM comparison) */
  dm?: number;
  bands: BandProfile[];
}
