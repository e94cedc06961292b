// @vitest-environment happy-dom
// The run page of a scintillation run (`sightline/scint@1`): the headline numbers or the limits,
// the interference, the three pictures, and τ from the scintles beside τ from the pulse tails.
// The results are small ones built here and checked against the schema; their headline numbers
// are those of two analyses of the fictional demo (SBP-B resolved, SBP-F unresolved).
import { QueryClient, QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen, waitFor, within } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { interpolateMagma, interpolateViridis } from 'd3-scale-chromatic';
import { createMemoryRouter, RouterProvider } from 'react-router';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { scintResultSchema, type ScintResult } from '../../shared/schemas/scint';
import type { ScatterFitResult } from '../../shared/schemas/scatter-fit';
import type { RunDetail, RunSummaryView } from '../../web/src/api/types';
import {
  blockEdges,
  flaggedRects,
  intensityColour,
} from '../../web/src/components/run/ScintPictures';
import { carryTau, ratioText } from '../../web/src/components/run/ScintTauRoutes';
import { ScintView } from '../../web/src/components/run/ScintView';
import { summaryLine } from '../../web/src/lib/runText';
import { KIND_LABEL } from '../../web/src/lib/time';
import { RunPage } from '../../web/src/routes/RunPage';

// ---- results built from the schema -------------------------------------------------------------

/** pictures of 8 × 6 blocks, block means of 128 channels × 48 sub-integrations of 30 s */
const N_FREQ = 8;
const N_TIME = 6;
const NCHAN = 128;
const NSUB = 48;
/** flagged: channel row 3 throughout, and sub-integration column 1 in every row */
const FLAGGED_ROW = 3;
const FLAGGED_COL = 1;

function dynspecPicture(f0: number, f1: number) {
  const values: number[] = [];
  const flagged: number[] = [];
  for (let r = 0; r < N_FREQ; r++)
    for (let c = 0; c < N_TIME; c++) {
      // one bright scintle at row 6, column 4 (the brightest unflagged block)
      values.push(r === 6 && c === 4 ? 5 : ((r * 7 + c * 3) % 10) / 10);
      flagged.push(r === FLAGGED_ROW || c === FLAGGED_COL ? 1 : 0);
    }
  return {
    n_freq: N_FREQ,
    n_time: N_TIME,
    freq_mhz: [f0, f1] as [number, number],
    time_s: [0, (NSUB - 1) * 30] as [number, number],
    values,
    flagged,
  };
}

function acfPicture(dnu: number | null, dt: number | null, dfMhz: number) {
  const lorentz = (l: number) => (dnu ? 0.8 / (1 + (l / dnu) ** 2) + 0.02 : 0);
  const gauss = (l: number) => (dt ? 0.8 * Math.exp(-((l / dt) ** 2)) + 0.02 : 0);
  return {
    freq_cut: [1, 2, 3, 4, 5].map((k) => ({
      lag_mhz: k * dfMhz,
      acf: lorentz(k * dfMhz) + (k % 2 ? 0.01 : -0.01),
      model: lorentz(k * dfMhz),
    })),
    time_cut: [1, 2, 3, 4, 5].map((k) => ({
      lag_s: k * 30,
      acf: gauss(k * 30) + (k % 2 ? -0.01 : 0.01),
      model: gauss(k * 30),
    })),
    patch: {
      n_freq_lag: 5,
      n_time_lag: 5,
      freq_lag_mhz: [-2 * dfMhz, 2 * dfMhz] as [number, number],
      time_lag_s: [-60, 60] as [number, number],
      values: Array.from({ length: 25 }, (_, i) => (i === 12 ? 1 : i === 0 ? null : 0.1 - i / 100)),
    },
  };
}

function secondaryPicture(eta: number | null) {
  const ft: [number, number] = [-16.6667, 16.1458];
  const delay: [number, number] = [0, 0.105];
  return {
    n_delay: 4,
    n_ft: 8,
    delay_us: delay,
    ft_mhz: ft,
    db: Array.from({ length: 32 }, (_, i) => 10 + (i % 8)),
    arc: eta === null ? null : [-6, -3, 0, 3, 6].map((f) => ({ ft_mhz: f, delay_us: eta * f * f })),
  };
}

const envelope = {
  schema: 'sightline/scint@1' as const,
  software: { name: 'sightline' as const, version: '0.1.0' },
  created_utc: '2026-12-02T04:07:45.956Z',
  parameters: { rfi_fence: 1.5, pixel_sigma: 5, c1: 1.16 },
  input: [{ path: 'dynspec/visit.npy', sha256: 'ab'.repeat(32), rows: 8 }],
  cautions: ['Check the warnings before release.'],
};

/** SBP-B at MJD 60229.565775 on the mid receiver: scintles resolved, an arc fitted. */
const measured: ScintResult = scintResultSchema.parse({
  ...envelope,
  source: 'SBP-B',
  mjd: '60229.565775',
  receiver: 'mid',
  nchan: NCHAN,
  nsub: NSUB,
  freq_min_mhz: 1152.34375,
  freq_max_mhz: 1747.65625,
  channel_mhz: 4.6875,
  subint_s: 30,
  rfi: {
    flagged_fraction: 0.063720703125,
    channels_flagged: [40, 41, 42, 43, 57],
    channels: [
      { channel: 40, freq_mhz: 1339.84375, kind: 'persistent' },
      { channel: 41, freq_mhz: 1344.53125, kind: 'persistent' },
      { channel: 42, freq_mhz: 1349.21875, kind: 'persistent' },
      { channel: 43, freq_mhz: 1353.90625, kind: 'persistent' },
      { channel: 57, freq_mhz: 1419.53125, kind: 'intermittent' },
    ],
    subints_flagged: [1, 2, 9],
    pixels_flagged: 18,
    snr_cost_fraction: 0.0510191499775654,
    fence_k: 1.5,
    pixel_sigma: 5,
  },
  status: 'measured',
  dnu_d_mhz: 24.678329106576065,
  dnu_d_upper_mhz: null,
  tau_lower_us: null,
  dnu_d_err_mhz: 7.455595830252924,
  dt_d_s: 412.3324879972851,
  dt_d_err_s: 81.7486927696637,
  n_scintles: 11.32229880987987,
  c1: 1.16,
  tau_us: 0.007481046759255785,
  tau_err_us: 0.00226010686474604,
  ref_freq_mhz: 1450,
  arc_curvature: {
    eta_s3: 0.0023735260942912392,
    eta_lo_s3: 0.0022672960838954347,
    eta_hi_s3: 0.00254044005049958,
    contrast_db: 4.550487907876497,
  },
  tau_from_tails: {
    tau_us: 0.0091,
    tau_err_us: 0.0012,
    freq_mhz: 1450,
    from: 'fits/SBP-B_60229.scatter.json',
  },
  pictures: {
    dynspec: dynspecPicture(1152.34375, 1747.65625),
    acf: acfPicture(24.678329106576065, 412.3324879972851, 4.6875),
    secondary: secondaryPicture(0.0023735260942912392),
  },
  warnings: ['the arc curvature is provisional'],
});

/** SBP-F at MJD 60227.669792 on the low receiver: no scintle structure, only limits; no arc. */
const unresolved: ScintResult = scintResultSchema.parse({
  ...envelope,
  source: 'SBP-F',
  mjd: '60227.669792',
  receiver: 'low',
  nchan: NCHAN,
  nsub: NSUB,
  freq_min_mhz: 551.367188,
  freq_max_mhz: 898.632813,
  channel_mhz: 2.734375,
  subint_s: 30,
  rfi: {
    flagged_fraction: 0.0234375,
    channels_flagged: [21, 22, 23],
    channels: [
      { channel: 21, freq_mhz: 608.789063, kind: 'persistent' },
      { channel: 22, freq_mhz: 611.523438, kind: 'persistent' },
      { channel: 23, freq_mhz: 614.257813, kind: 'persistent' },
    ],
    subints_flagged: [],
    pixels_flagged: 0,
    snr_cost_fraction: 0.012127802559673384,
    fence_k: 1.5,
    pixel_sigma: 5,
  },
  status: 'unresolved',
  dnu_d_mhz: null,
  dnu_d_upper_mhz: 2.734375,
  tau_lower_us: 0.06751807414367035,
  dnu_d_err_mhz: null,
  dt_d_s: null,
  dt_d_err_s: null,
  n_scintles: null,
  c1: 1.16,
  tau_us: null,
  tau_err_us: null,
  ref_freq_mhz: 725.0000005,
  arc_curvature: null,
  tau_from_tails: null,
  pictures: {
    dynspec: dynspecPicture(551.367188, 898.632813),
    acf: acfPicture(null, null, 2.734375),
    secondary: secondaryPicture(null),
  },
  warnings: [
    'the frequency cut of the ACF could not be fitted',
    'no scintle structure across channels',
  ],
});

// ---- a fake server for the look-up of the same visit's scattering fit ----------------------------

const json = (status: number, body: unknown) =>
  new Response(JSON.stringify(body), { status, headers: { 'Content-Type': 'application/json' } });

const CREATOR = { id: 'u-ana', email: 'ana@saltbush.test', name: 'Ana' };

function runView(id: string, kind: RunSummaryView['kind'], extra: Partial<RunDetail> = {}) {
  return {
    id,
    url: `http://127.0.0.1/runs/${id}`,
    kind,
    state: 'approved',
    version: 1,
    title: null,
    pulsar: 'SBP-F',
    is_reference: false,
    summary: {},
    parameters: {},
    input: [],
    software_version: '0.1.0',
    constant: null,
    created_by: CREATOR,
    upload_id: null,
    created_at: '2026-12-01T10:00:00Z',
    updated_at: '2026-12-01T10:00:00Z',
    submitted_at: null,
    decided_at: null,
    baseline: null,
    reviews: [],
    ...extra,
  } as RunDetail;
}

/** a profile fit of SBP-F's same visit (0.2 d away): τ(1000 MHz) = 1.2 ± 0.1 µs, α = 4.0 ± 0.2 */
const scatterResult = {
  schema: 'sightline/scatter-fit@1',
  software: { name: 'sightline', version: '0.1.0' },
  input: [],
  source: 'SBP-F',
  mjd: '60227.869792',
  period_s: 0.005,
  nbin: 256,
  model: 'gauss',
  dm: 120,
  bands: [],
  power_law: {
    ref_freq_mhz: 1000,
    tau_ref_us: 1.2,
    tau_ref_err_us: 0.1,
    alpha: 4.0,
    alpha_err: 0.2,
    alpha_fixed: false,
    n_bands: 4,
    chi2: 2,
    dof: 2,
    reduced_chi2: 1,
  },
  expected_tau_us: null,
  expected: null,
  warnings: [],
} as unknown as ScatterFitResult;

let scatterRuns: RunSummaryView[] = [];
let listStatus = 200;
const fetchMock = vi.fn(async (url: string) => {
  const u = new URL(url, 'http://app.test');
  if (u.pathname === '/api/runs') {
    if (listStatus !== 200)
      return json(listStatus, { error: { code: 'internal', message: 'the database is away' } });
    return json(200, { items: scatterRuns, page: 1, page_size: 200, total: scatterRuns.length });
  }
  if (u.pathname === '/api/runs/scatter-near')
    return json(200, runView('scatter-near', 'scatter-fit', { result: scatterResult }));
  if (u.pathname === '/api/runs/scint-b')
    return json(
      200,
      runView('scint-b', 'scint', {
        pulsar: 'SBP-B',
        state: 'in_review',
        result: measured as unknown as RunDetail['result'],
      }),
    );
  if (u.pathname === '/api/me')
    return json(200, { ...CREATOR, role: 'lead', via: 'session', permissions: [] });
  return json(404, { error: { code: 'not_found', message: `no ${u.pathname}` } });
});

beforeEach(() => {
  fetchMock.mockClear();
  listStatus = 200;
  scatterRuns = [
    runView('scatter-far', 'scatter-fit', { summary: { mjd: '60230.669792' } }),
    runView('scatter-near', 'scatter-fit', { summary: { mjd: '60227.869792' } }),
  ];
  vi.stubGlobal('fetch', fetchMock);
});
afterEach(() => {
  cleanup();
  vi.unstubAllGlobals();
});

function renderView(result: ScintResult) {
  const qc = new QueryClient({ defaultOptions: { queries: { retry: false } } });
  const router = createMemoryRouter(
    [{ path: '/', element: <ScintView result={result} pulsar={result.source} /> }],
    { initialEntries: ['/'] },
  );
  return render(
    <QueryClientProvider client={qc}>
      <RouterProvider router={router} />
    </QueryClientProvider>,
  );
}

/** The headline figure under a label (Figures: dt label, dd value). */
function figure(label: string): string {
  const dt = screen.getAllByText(label).find((e) => e.tagName === 'DT');
  expect(dt, `headline "${label}"`).toBeTruthy();
  return dt!.nextElementSibling!.textContent!;
}

const figureNamed = (name: string) => screen.getByRole('figure', { name });
/** the rect marks of a heatmap (not of its colour legend) inside a figure */
const rectGroups = (el: HTMLElement) => [
  ...el.querySelectorAll('[data-part="heatmap"] g[aria-label="rect"]'),
];
/** the heatmap's blocks: its first rect mark, one rectangle per block */
const rectsIn = (el: HTMLElement) =>
  [...rectGroups(el)[0].querySelectorAll('rect')] as SVGRectElement[];
/** rectangles filled with a pattern (the hatching of flagged blocks) */
const hatchedIn = (el: HTMLElement) =>
  rectGroups(el)
    .filter((g) => g.getAttribute('fill')?.startsWith('url('))
    .flatMap((g) => [...g.querySelectorAll('rect')]);

// ---- the tests -------------------------------------------------------------------------------------

describe('scint run: a resolved spectrum (SBP-B)', () => {
  it('states Δν_d, Δt_d, N_s and τ with their errors, at the band centre, with C₁', () => {
    renderView(measured);
    expect(figure('Δν_d, MHz')).toBe('24.7 ± 7.5');
    expect(figure('Δt_d, s')).toBe('412 ± 82');
    expect(figure('Scintles N_s')).toBe('11.3');
    expect(figure('τ at 1450 MHz, µs')).toBe('0.00748 ± 0.0023');
    expect(document.body.textContent).toContain('τ = C₁/(2π Δν_d) with C₁ = 1.16');
    // no limit wording for a measured spectrum
    expect(screen.queryByText(/Scintles not resolved/)).toBeNull();
  });

  it('lists the interference: fraction, S/N cost, channels by kind with frequencies, sub-integrations', () => {
    renderView(measured);
    const text = document.body.textContent!;
    expect(text).toContain('6.37 % of the pixels flagged');
    expect(text).toContain('5.10 % of the spectrum’s S/N');
    expect(screen.getByText('ch 40–43 (1339.84–1353.91 MHz)')).toBeTruthy();
    expect(screen.getByText('ch 57 (1419.53 MHz)')).toBeTruthy();
    // sub-integrations 1, 2 and 9 start at 30, 60 and 270 s (30 s each from t = 0)
    expect(screen.getByText('#1–2 (t 30–60 s), #9 (t 270 s)')).toBeTruthy();
    expect(text).toContain('Channels, dead (0)');
  });

  it('shows warnings and cautions', () => {
    renderView(measured);
    expect(screen.getByText(/the arc curvature is provisional/)).toBeTruthy();
    expect(screen.getByRole('note').textContent).toContain('Check the warnings before release.');
  });

  it('draws the three pictures as named figures with captions', () => {
    renderView(measured);
    for (const name of ['Dynamic spectrum', 'Autocorrelation', 'Secondary spectrum']) {
      const fig = figureNamed(name);
      expect(fig.querySelector('figcaption')!.textContent!.length).toBeGreaterThan(40);
      expect(fig.querySelector('svg'), `${name} has a drawing`).not.toBeNull();
    }
    // the ACF is three plots: the two cuts and the centre of the 2-D ACF
    const acf = figureNamed('Autocorrelation');
    for (const name of [
      'Frequency cut of the ACF',
      'Time cut of the ACF',
      'Centre of the 2-D ACF against time lag and frequency lag',
    ])
      expect(within(acf).getByRole('figure', { name })).toBeTruthy();
  });

  it('draws every block of the dynamic spectrum and hatches the flagged ones, merged', () => {
    renderView(measured);
    const fig = figureNamed('Dynamic spectrum');
    expect(rectsIn(fig)).toHaveLength(N_FREQ * N_TIME);
    // column 1 above and below the flagged row, and the row itself: three rectangles
    expect(hatchedIn(fig)).toHaveLength(3);
    // the hatching's pattern is defined in the same drawing
    const fill = rectGroups(fig)
      .map((g) => g.getAttribute('fill'))
      .find((f) => f?.startsWith('url('))!;
    const id = /url\(#(.+)\)/.exec(fill)![1];
    expect(fig.querySelector(`pattern[id="${id}"]`)).not.toBeNull();
  });

  it('the hatching can be switched off with the keyboard', async () => {
    const user = userEvent.setup();
    renderView(measured);
    const box = screen.getByRole('checkbox', { name: /Hatch flagged blocks/ });
    expect((box as HTMLInputElement).checked).toBe(true);
    box.focus();
    await user.keyboard(' ');
    await waitFor(() => expect((box as HTMLInputElement).checked).toBe(false));
    const fig = figureNamed('Dynamic spectrum');
    await waitFor(() =>
      expect(rectsIn(fig).filter((r) => r.getAttribute('fill')?.startsWith('url('))).toHaveLength(
        0,
      ),
    );
    expect(fig.querySelector('figcaption')!.textContent).toContain('filled by interpolation');
  });

  it('colours intensity with magma, never with the frequency map (viridis)', () => {
    renderView(measured);
    const fills = rectsIn(figureNamed('Dynamic spectrum')).map((r) => r.getAttribute('fill')!);
    expect(fills).toHaveLength(N_FREQ * N_TIME);
    // the brightest unflagged block sits at the top of the colour range
    expect(fills).toContain(interpolateMagma(0.93));
    expect(intensityColour(1)).toBe(interpolateMagma(0.93));
    const viridis = new Set(Array.from({ length: 101 }, (_, i) => interpolateViridis(i / 100)));
    expect(fills.filter((f) => viridis.has(f))).toEqual([]);
  });

  it('marks the fitted widths on the ACF cuts: HWHM in frequency, 1/e in time', () => {
    renderView(measured);
    const acf = figureNamed('Autocorrelation');
    const text = acf.textContent!;
    expect(text).toContain('Δν_d = 24.7 MHz (HWHM)');
    expect(text).toContain('Δt_d = 412 s (1/e)');
    const caption = acf.querySelector('figcaption')!.textContent!;
    expect(caption).toContain('Δν_d = 24.7 MHz is its half width at half maximum');
    expect(caption).toContain('Δt_d = 412 s is its half width at 1/e');
    // points for the data, a line for the model, in each cut
    for (const name of ['Frequency cut of the ACF', 'Time cut of the ACF']) {
      const cut = within(acf).getByRole('figure', { name });
      expect(cut.querySelectorAll('g[aria-label="dot"] circle')).toHaveLength(5);
      expect(cut.querySelector('g[aria-label="line"] path')).not.toBeNull();
    }
    // the 2-D centre: 24 defined values (one is null and left out)
    const centre = within(acf).getByRole('figure', {
      name: 'Centre of the 2-D ACF against time lag and frequency lag',
    });
    expect(rectsIn(centre)).toHaveLength(24);
  });

  it('draws the fitted arc on the secondary spectrum and states η', () => {
    renderView(measured);
    const sec = figureNamed('Secondary spectrum');
    expect(rectsIn(sec)).toHaveLength(32);
    const toggle = within(sec).getByRole('checkbox', {
      name: /Fitted arc f_τ = η f_t², η = 0.00237 s³/,
    });
    expect((toggle as HTMLInputElement).checked).toBe(true);
    expect(sec.querySelector('figcaption')!.textContent).toContain(
      'η = 0.00237 s³ (µs/mHz²; 0.00227–0.00254)',
    );
    expect(sec.textContent).not.toContain('No arc');
    // the arc: a dark underlay and a light dashed line through the five arc points
    const arcLines = () => sec.querySelectorAll('[data-part="heatmap"] g[aria-label="line"] path');
    expect(arcLines()).toHaveLength(2);
  });

  it('the arc can be hidden to judge the spectrum beneath it', async () => {
    const user = userEvent.setup();
    renderView(measured);
    const sec = figureNamed('Secondary spectrum');
    await user.click(within(sec).getByRole('checkbox', { name: /Fitted arc/ }));
    await waitFor(() =>
      expect(sec.querySelector('[data-part="heatmap"] g[aria-label="line"]')).toBeNull(),
    );
    expect(sec.querySelector('figcaption')!.textContent).toContain('(hidden now)');
    expect(rectsIn(sec)).toHaveLength(32);
  });

  it('puts τ from the tails given to the analysis beside τ from the scintles, without asking the server', () => {
    renderView(measured);
    const routes = screen.getByRole('region', { name: 'Scattering by two routes' });
    expect(within(routes).getByText('0.00748 ± 0.0023 µs')).toBeTruthy();
    expect(within(routes).getByText('0.00910 ± 0.0012 µs')).toBeTruthy();
    expect(routes.textContent).toContain('fits/SBP-B_60229.scatter.json');
    // 0.0091 / 0.00748 = 1.22; (0.0091 − 0.00748)/hypot(0.00226, 0.0012) = 0.63σ
    expect(routes.textContent).toContain('τ from the tails over τ from the scintles: 1.22');
    expect(routes.textContent).toContain('0.63σ');
    expect(fetchMock).not.toHaveBeenCalled();
  });
});

describe('scint run: an unresolved spectrum (SBP-F)', () => {
  it('states the limits plainly instead of values', () => {
    renderView(unresolved);
    expect(figure('Δν_d, MHz')).toBe('< 2.73');
    expect(figure('τ at 725 MHz, µs')).toBe('> 0.0675');
    expect(figure('Δt_d, s')).toBe('—');
    expect(figure('Scintles N_s')).toBe('—');
    const note = screen.getByText(/Scintles not resolved/).closest('p')!;
    expect(note.textContent).toContain('Δν_d < 2.73 MHz');
    expect(note.textContent).toContain('τ > 0.0675 µs');
    expect(note.textContent).toContain('725 MHz');
  });

  it('draws the ACF points without a model or widths, and says "no arc"', () => {
    renderView(unresolved);
    const acf = figureNamed('Autocorrelation');
    expect(acf.textContent).not.toContain('Δν_d =');
    expect(acf.textContent).not.toContain('Δt_d =');
    expect(acf.querySelector('figcaption')!.textContent).toContain('Frequency cut: not fitted');
    const cut = within(acf).getByRole('figure', { name: 'Frequency cut of the ACF' });
    expect(cut.querySelectorAll('g[aria-label="dot"] circle')).toHaveLength(5);
    expect(cut.querySelector('g[aria-label="line"]')).toBeNull();
    const sec = figureNamed('Secondary spectrum');
    expect(sec.textContent).toContain('No arc fitted');
    expect(sec.querySelector('[data-part="heatmap"] g[aria-label="line"]')).toBeNull();
    expect(sec.querySelector('figcaption')!.textContent).toContain('No arc');
  });

  it('finds the same visit’s scattering fit and carries its τ to the band centre, with a link', async () => {
    renderView(unresolved);
    const routes = screen.getByRole('region', { name: 'Scattering by two routes' });
    // τ(ν) = τ_ref (ν/ν_ref)^−α (the usual power law, common practice), first-order errors:
    // 1.2 µs · (725/1000)^−4 and 1.2·(725/1000)^−4 · √((0.1/1.2)² + (0.2·ln 0.725)²)
    const tau = 1.2 * (725.0000005 / 1000) ** -4;
    const err = tau * Math.sqrt((0.1 / 1.2) ** 2 + (0.2 * Math.log(725.0000005 / 1000)) ** 2);
    expect(tau.toFixed(2)).toBe('4.34');
    expect(err.toFixed(2)).toBe('0.46');
    await within(routes).findByText('4.34 ± 0.46 µs');
    const link = within(routes).getByRole('link', { name: /SBP-F · scattering, MJD 60227.869792/ });
    expect(link.getAttribute('href')).toBe('/runs/scatter-near');
    expect(routes.textContent).toContain('τ = 1.20 µs · (ν/1000 MHz)^−4.00');
    // the limit τ > 0.0675 µs and the tails' 4.34 µs agree
    expect(routes.textContent).toContain('lies above the scintles’ lower limit of 0.0675 µs');
    // the look-up asked for this pulsar's scattering fits only
    const list = fetchMock.mock.calls
      .map(([u]) => new URL(u, 'http://app.test'))
      .find((u) => u.pathname === '/api/runs')!;
    expect(list.searchParams.get('pulsar')).toBe('SBP-F');
    expect(list.searchParams.get('kind')).toBe('scatter-fit');
  });

  it('says where to get a scattering fit when none lies within a day', async () => {
    scatterRuns = [runView('scatter-far', 'scatter-fit', { summary: { mjd: '60230.669792' } })];
    renderView(unresolved);
    const routes = screen.getByRole('region', { name: 'Scattering by two routes' });
    await within(routes).findByText(/No scattering fit of SBP-F within 1 day of MJD 60227.669792/);
    expect(routes.textContent).toContain('sightline scatter fit');
    expect(within(routes).getByRole('link', { name: 'New analysis' })).toBeTruthy();
  });

  it('shows loading, then the server’s error with a way to try again', async () => {
    listStatus = 500;
    renderView(unresolved);
    const routes = screen.getByRole('region', { name: 'Scattering by two routes' });
    expect(within(routes).getByRole('status').textContent).toContain('Loading the scattering fit');
    const alert = await within(routes).findByRole('alert');
    expect(alert.textContent).toContain('the database is away');
    expect(within(alert).getByRole('button', { name: 'try again' })).toBeTruthy();
  });
});

describe('scint pictures: geometry', () => {
  it('block edges sit half a sample outside the first and last centres', () => {
    // 4 channels of 2 MHz centred at 101, 103, 105, 107 MHz: edges 100 … 108
    expect(blockEdges([101, 107], 4, 2)).toEqual([100, 102, 104, 106, 108]);
    // the same 4 channels as 2 blocks of 2: edges 100, 104, 108
    expect(blockEdges([101, 107], 2, 2)).toEqual([100, 104, 108]);
    // a band stored high to low keeps its order
    expect(blockEdges([107, 101], 4, 2)).toEqual([108, 106, 104, 102, 100]);
    // without a native step: even blocks
    expect(blockEdges([0, 10], 3)).toEqual([-2.5, 2.5, 7.5, 12.5]);
  });

  it('merges flagged blocks into rectangles', () => {
    // 3 × 4, a flagged channel (row 1) and a half-flagged block that stays unhatched
    const f = [0, 0, 0.4, 0, 1, 1, 1, 1, 0, 0, 0, 0];
    const edges = [0, 1, 2, 3, 4];
    expect(flaggedRects(f, 3, 4, [0, 1, 2, 3], edges)).toEqual([{ x1: 0, x2: 4, y1: 1, y2: 2 }]);
  });

  it('writes large and small ratios in powers of ten', () => {
    expect(ratioText(1.2165)).toBe('1.22');
    expect(ratioText(36866)).toBe('3.69 × 10⁴');
    expect(ratioText(0.00123)).toBe('1.23 × 10⁻³');
    expect(ratioText(-1)).toBe('—');
  });

  it('carries a power-law τ with first-order errors (common practice)', () => {
    const pl = scatterResult.power_law!;
    // at the reference frequency: τ_ref and its own error
    expect(carryTau(pl, 1000)).toEqual({ tauUs: 1.2, errUs: 0.1 });
    // an octave up with α = 4: τ/16; relative error √((0.1/1.2)² + (0.2 ln 2)²)
    const c = carryTau(pl, 2000);
    expect(c.tauUs).toBeCloseTo(0.075, 12);
    expect(c.errUs).toBeCloseTo(0.075 * Math.hypot(0.1 / 1.2, 0.2 * Math.LN2), 12);
  });
});

describe('scint runs in lists', () => {
  it('are labelled "scintillation" and summed up by their widths or limits', () => {
    expect(KIND_LABEL.scint).toBe('scintillation');
    expect(
      summaryLine({
        kind: 'scint',
        summary: {
          status: 'measured',
          dnu_d_mhz: 24.678,
          tau_us: 0.007481,
          ref_freq_mhz: 1450,
          mjd: '60229.565775',
        },
      }),
    ).toBe('Δν_d 24.7 MHz · τ 0.00748 µs at 1450 MHz · MJD 60229.6');
    expect(
      summaryLine({
        kind: 'scint',
        summary: {
          status: 'unresolved',
          dnu_d_mhz: null,
          dnu_d_upper_mhz: 2.734375,
          tau_lower_us: 0.067518,
          ref_freq_mhz: 725.0000005,
          mjd: '60227.669792',
        },
      }),
    ).toBe('unresolved: Δν_d < 2.73 MHz, τ > 0.0675 µs at 725 MHz · MJD 60227.7');
  });
});

describe('the run page of a scint run', () => {
  it('is titled with the pulsar and "scintillation" and draws the scint view', async () => {
    const qc = new QueryClient({ defaultOptions: { queries: { retry: false } } });
    const router = createMemoryRouter([{ path: '/runs/:id', element: <RunPage /> }], {
      initialEntries: ['/runs/scint-b'],
    });
    render(
      <QueryClientProvider client={qc}>
        <RouterProvider router={router} />
      </QueryClientProvider>,
    );
    expect(screen.getByRole('status').textContent).toContain('Loading the run');
    const h1 = await screen.findByRole('heading', { level: 1 });
    expect(h1.textContent).toBe('SBP-B · scintillation');
    await screen.findByRole('figure', { name: 'Dynamic spectrum' });
    expect(figure('Δν_d, MHz')).toBe('24.7 ± 7.5');
  });
});
