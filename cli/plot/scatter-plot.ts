import { createCanvas, type SKRSContext2D } from '@napi-rs/canvas';
import type { ScatterFitResult } from '../../shared/schemas/scatter-fit.js';
import type { ProfileSet } from '../../shared/profiles/types.js';
import { gaussModel, templateModel } from '../../shared/profiles/models.js';
import { fmt } from '../render.js';
import { frequencyColour, INK, INK_SOFT, PAPER, registerFonts, RULE } from './canvas.js';

const PANEL_W = 380;
const PANEL_H = 250;
const MARGIN = 14;

/**
 * One panel per band (data in grey, the fitted model in the band's colour, residuals beneath),
 * and a log–log panel of τ(ν) with the power law. Returns PNG bytes.
 */
export function drawScatterPlot(
  r: ScatterFitResult,
  set: ProfileSet,
  template?: ArrayLike<number>,
): Uint8Array {
  registerFonts();
  const panels = r.bands.length + 1;
  const cols = Math.min(3, panels);
  const rows = Math.ceil(panels / cols);
  const width = cols * PANEL_W + MARGIN * 2;
  const height = rows * PANEL_H + 56 + MARGIN;
  const canvas = createCanvas(width, height);
  const g = canvas.getContext('2d');
  g.fillStyle = PAPER;
  g.fillRect(0, 0, width, height);
  g.fillStyle = INK;
  g.font = '600 17px SightlineSans';
  g.fillText(`${r.source} · MJD ${r.mjd} · scattering per band (model ${r.model})`, MARGIN, 26);
  g.font = '13px SightlineSans';
  g.fillStyle = INK_SOFT;
  const pl = r.power_law;
  g.fillText(
    pl
      ? `τ(${pl.ref_freq_mhz} MHz) = ${fmt(pl.tau_ref_us, 3)} ± ${fmt(pl.tau_ref_err_us, 2)} µs · α = ${pl.alpha.toFixed(2)}${pl.alpha_err === null ? ' (fixed)' : ` ± ${pl.alpha_err.toFixed(2)}`}`
      : 'no τ(ν) power law (fewer than two constrained bands)',
    MARGIN,
    46,
  );
  const freqs = r.bands.map((b) => b.freq_mhz);
  const lo = Math.min(...freqs);
  const hi = Math.max(...freqs);
  r.bands.forEach((band, i) => {
    const x0 = MARGIN + (i % cols) * PANEL_W;
    const y0 = 56 + Math.floor(i / cols) * PANEL_H;
    const bins = set.bands[i].bins;
    const n = bins.length;
    const names = Object.keys(band.params);
    const params = names.map((k) => band.params[k]);
    const model = new Float64Array(n);
    if (!names.length) {
      // a band whose fit failed outright: draw the data against its mean
      let mean = 0;
      for (let k = 0; k < n; k++) mean += bins[k] / n;
      model.fill(mean);
    } else if (r.model === 'template' && template) templateModel(template).evaluate(params, model);
    else gaussModel((names.length - 2) / 3, n).evaluate(params, model);
    const colour = frequencyColour(band.freq_mhz, lo, hi);
    const title =
      band.status === 'upper_limit'
        ? `${fmt(band.freq_mhz, 5)} MHz · τ < ${fmt(band.tau_upper_us, 3)} µs`
        : band.status === 'failed'
          ? `${fmt(band.freq_mhz, 5)} MHz · fit failed`
          : `${fmt(band.freq_mhz, 5)} MHz · τ = ${fmt(band.tau_us, 3)} ± ${fmt(band.tau_err_us, 2)} µs`;
    drawProfilePanel(
      g,
      x0,
      y0,
      PANEL_W - 12,
      PANEL_H - 12,
      bins,
      model,
      colour,
      title,
      band.reduced_chi2,
    );
  });
  const k = r.bands.length;
  drawTauPanel(
    g,
    MARGIN + (k % cols) * PANEL_W,
    56 + Math.floor(k / cols) * PANEL_H,
    PANEL_W - 12,
    PANEL_H - 12,
    r,
    lo,
    hi,
  );
  return canvas.toBuffer('image/png');
}

function drawProfilePanel(
  g: SKRSContext2D,
  x0: number,
  y0: number,
  w: number,
  h: number,
  data: ArrayLike<number>,
  model: Float64Array,
  colour: string,
  title: string,
  redChi2: number | null,
): void {
  const n = data.length;
  const top = y0 + 24;
  const mainH = (h - 30) * 0.72;
  const resTop = top + mainH + 6;
  const resH = h - 30 - mainH - 6;
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < n; i++) {
    min = Math.min(min, data[i], model[i]);
    max = Math.max(max, data[i], model[i]);
  }
  const pad = (max - min) * 0.05 || 1;
  const ys = (v: number) => top + mainH - ((v - min + pad) / (max - min + 2 * pad)) * mainH;
  const xs = (i: number) => x0 + 4 + ((i + 0.5) / n) * (w - 8);
  g.strokeStyle = RULE;
  g.lineWidth = 1;
  g.strokeRect(x0 + 0.5, top + 0.5, w, mainH);
  g.strokeRect(x0 + 0.5, resTop + 0.5, w, resH);
  g.fillStyle = INK;
  g.font = '600 13px SightlineSans';
  g.fillText(title, x0, y0 + 16);
  if (redChi2 !== null) {
    g.font = '12px SightlineMono';
    g.fillStyle = INK_SOFT;
    const t = `χ²ᵣ ${redChi2.toFixed(2)}`;
    g.fillText(t, x0 + w - g.measureText(t).width, y0 + 16);
  }
  // data
  g.strokeStyle = '#9aa3ae';
  g.lineWidth = 1;
  g.beginPath();
  for (let i = 0; i < n; i++) (i ? g.lineTo : g.moveTo).call(g, xs(i), ys(data[i]));
  g.stroke();
  // model
  g.strokeStyle = colour;
  g.lineWidth = 2;
  g.beginPath();
  for (let i = 0; i < n; i++) (i ? g.lineTo : g.moveTo).call(g, xs(i), ys(model[i]));
  g.stroke();
  // residuals
  let rmax = 0;
  for (let i = 0; i < n; i++) rmax = Math.max(rmax, Math.abs(data[i] - model[i]));
  rmax = rmax || 1;
  const yr = (v: number) => resTop + resH / 2 - (v / rmax) * (resH / 2 - 2);
  g.strokeStyle = RULE;
  g.beginPath();
  g.moveTo(x0, yr(0));
  g.lineTo(x0 + w, yr(0));
  g.stroke();
  g.strokeStyle = INK_SOFT;
  g.lineWidth = 1;
  g.beginPath();
  for (let i = 0; i < n; i++) (i ? g.lineTo : g.moveTo).call(g, xs(i), yr(data[i] - model[i]));
  g.stroke();
  g.fillStyle = INK_SOFT;
  g.font = '11px SightlineSans';
  g.fillText('phase 0', x0, y0 + h - 1);
  const one = '1';
  g.fillText(one, x0 + w - g.measureText(one).width, y0 + h - 1);
  g.fillText('residual', x0 + 4, resTop + 11);
}

function drawTauPanel(
  g: SKRSContext2D,
  x0: number,
  y0: number,
  w: number,
  h: number,
  r: ScatterFitResult,
  lo: number,
  hi: number,
): void {
  const top = y0 + 24;
  const ph = h - 48;
  const left = x0 + 44;
  const pw = w - 50;
  g.fillStyle = INK;
  g.font = '600 13px SightlineSans';
  g.fillText('τ against frequency (log–log)', x0, y0 + 16);
  g.strokeStyle = RULE;
  g.strokeRect(left + 0.5, top + 0.5, pw, ph);
  const pts = r.bands
    .filter((b) => b.status !== 'failed')
    .map((b) => ({
      f: b.freq_mhz,
      t: b.status === 'upper_limit' ? (b.tau_upper_us ?? b.tau_us) : b.tau_us,
      e: b.tau_err_us ?? 0,
      ul: b.status !== 'fitted',
    }));
  const valid = pts.filter((p) => p.t > 0);
  if (!valid.length) return;
  const lf0 = Math.log10(lo / 1.1);
  const lf1 = Math.log10(hi * 1.1);
  // room below each point for its error bar, or for an upper limit's arrow
  let lt0 = Math.min(
    ...valid.map((p) => Math.log10(p.ul ? p.t / 3 : Math.max(p.t - p.e, p.t / 10))),
  );
  let lt1 = Math.max(...valid.map((p) => Math.log10(p.t + p.e)));
  if (lt1 - lt0 < 0.5) {
    lt0 -= 0.25;
    lt1 += 0.25;
  }
  const X = (f: number) => left + ((Math.log10(f) - lf0) / (lf1 - lf0)) * pw;
  const Y = (t: number) => top + ph - ((Math.log10(t) - lt0) / (lt1 - lt0)) * ph;
  const pl = r.power_law;
  if (pl) {
    g.save();
    g.beginPath();
    g.rect(left, top, pw, ph);
    g.clip();
    g.strokeStyle = INK_SOFT;
    g.lineWidth = 1.5;
    g.beginPath();
    for (let k = 0; k <= 40; k++) {
      const f = 10 ** (lf0 + ((lf1 - lf0) * k) / 40);
      const t = pl.tau_ref_us * (f / pl.ref_freq_mhz) ** -pl.alpha;
      (k ? g.lineTo : g.moveTo).call(g, X(f), Y(t));
    }
    g.stroke();
    g.restore();
  }
  for (const p of valid) {
    g.strokeStyle = frequencyColour(p.f, lo, hi);
    g.fillStyle = g.strokeStyle;
    if (p.ul) {
      // an upper limit: a downward arrow from the limit
      g.beginPath();
      g.moveTo(X(p.f), Y(p.t));
      g.lineTo(X(p.f), Math.min(top + ph, Y(p.t) + 18));
      g.stroke();
      g.beginPath();
      g.moveTo(X(p.f) - 4, Math.min(top + ph, Y(p.t) + 14));
      g.lineTo(X(p.f), Math.min(top + ph, Y(p.t) + 20));
      g.lineTo(X(p.f) + 4, Math.min(top + ph, Y(p.t) + 14));
      g.fill();
    } else {
      g.beginPath();
      g.moveTo(X(p.f), Y(Math.max(p.t - p.e, p.t / 10)));
      g.lineTo(X(p.f), Y(p.t + p.e));
      g.stroke();
      g.beginPath();
      g.arc(X(p.f), Y(p.t), 3.5, 0, 2 * Math.PI);
      g.fill();
    }
  }
  g.fillStyle = INK_SOFT;
  g.font = '11px SightlineMono';
  g.fillText(`${fmt(10 ** lt1, 2)} µs`, x0, top + 10);
  g.fillText(`${fmt(10 ** lt0, 2)} µs`, x0, top + ph);
  g.fillText(`${fmt(lo, 4)} MHz`, left, top + ph + 14);
  const hiText = `${fmt(hi, 4)} MHz`;
  g.fillText(hiText, left + pw - g.measureText(hiText).width, top + ph + 14);
}
