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
  /**
   * the DM the channels were dedispersed (aligned) with, which is also the pulsar's DM for the
   * empirical τ–DM comparison; absent: not dedispersed
   */
  dm?: number;
  /**
   * the frequency (MHz) at which phase 0 of the profiles refers to `mjd` after dedispersion;
   * absent: infinite frequency
   */
  refFreqMhz?: number;
  /** templates: the phase (turns) whose arrival a matched arrival time marks; default 0 */
  fiducialPhase?: number;
  /** receiver/backend label of the observation (cubes: labels their arrival times) */
  receiver?: string;
  /** cubes: indices of channels flagged in the file (entirely NaN or constant) */
  flagged?: number[];
  bands: BandProfile[];
}
