/**
 * The fictional demo scenario (shared handout demo-scenario.md): the Saltbush Plain
 * Observatory's three receivers and the Lantern Timing Group's six invented pulsars.
 */
export interface Receiver {
  name: string;
  loMhz: number;
  hiMhz: number;
  channels: number;
}

export const RECEIVERS: Receiver[] = [
  { name: 'low', loMhz: 550, hiMhz: 900, channels: 256 },
  { name: 'mid', loMhz: 1150, hiMhz: 1750, channels: 512 },
  { name: 'high', loMhz: 2100, hiMhz: 3400, channels: 512 },
];

export interface DemoPulsar {
  source: string;
  period_s: number;
  dm: number;
  ra_deg: number;
  dec_deg: number;
  is_reference: boolean;
  shows: string;
}

export const DEMO_PULSARS: DemoPulsar[] = [
  {
    source: 'SBP-A',
    period_s: 0.00271,
    dm: 9.84,
    ra_deg: 61.2,
    dec_deg: -12.4,
    is_reference: false,
    shows: 'near the ecliptic: solar-wind DM bumps each year',
  },
  {
    source: 'SBP-B',
    period_s: 0.00405,
    dm: 21.36,
    ra_deg: 140.8,
    dec_deg: 33.0,
    is_reference: true,
    shows: 'quiet reference pulsar (baseline, CI check)',
  },
  {
    source: 'SBP-C',
    period_s: 0.00193,
    dm: 47.12,
    ra_deg: 255.3,
    dec_deg: -20.9,
    is_reference: false,
    shows: 'slow DM trend + annual term',
  },
  {
    source: 'SBP-D',
    period_s: 0.00562,
    dm: 118.7,
    ra_deg: 280.6,
    dec_deg: -5.2,
    is_reference: false,
    shows: 'strong scattering, α ≈ 4.1, tails visible in low',
  },
  {
    source: 'SBP-E',
    period_s: 0.00333,
    dm: 33.9,
    ra_deg: 201.4,
    dec_deg: 60.7,
    is_reference: false,
    shows: 'a two-month plasma-lens event: DM spike and extra scattering',
  },
  {
    source: 'SBP-F',
    period_s: 0.00788,
    dm: 251.4,
    ra_deg: 272.9,
    dec_deg: -23.3,
    is_reference: false,
    shows: 'heavy scattering; τ from tails vs scintillation disagree at low',
  },
];

export const DEMO_OBSERVATORY = 'Saltbush Plain Observatory';
export const DEMO_GROUP = 'Lantern Timing Group';
export const DEMO_MJD_START = 60200;
export const DEMO_MJD_END = 61300;
export const DEMO_CADENCE_DAYS = 14;
