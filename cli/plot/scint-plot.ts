import { createCanvas, type SKRSContext2D } from '@napi-rs/canvas';
import { interpolateMagma } from 'd3-scale-chromatic';
import type { ScintResult } from '../../shared/schemas/scint.js';
import { fmt } from '../render.js';
import { INK, INK_SOFT, PAPER, registerFonts, RULE } from './canvas.js';

/** Flagged pixels: a neutral grey that no magma shade takes. */
const FLAG = '#8fb8c9';
const W = 760;
const H = 520;
const LEFT = 70;
const TOP = 56;
const PLOT_W = 560;
const PLOT_H = 400;

function quantile(values: number[], p: number): number {
  const s = values.filter(Number.isFinite).sort((a, b) => a - b);
  return s.length ? s[Math.min(s.length - 1, Math.floor(p * s.length))] : 0;
}

/** A heatmap of rows × cols values (row 0 at the bottom), clipped to [lo, hi]. */
function heatmap(
  g: SKRSContext2D,
  values: ArrayLike<number>,
  rows: number,
  cols: number,
  lo: number,
  hi: number,
  flagged?: ArrayLike<number>,
): void {
  const cw = PLOT_W / cols;
  const rh = PLOT_H / rows;
  for (let r = 0; r < rows; r++)
    for (let c = 0; c < cols; c++) {
      const i = r * cols + c;
      const v = values[i];
      const t = hi > lo ? Math.min(1, Math.max(0, (v - lo) / (hi - lo))) : 0.5;
      g.fillStyle = flagged && flagged[i] >= 0.5 ? FLAG : interpolateMagma(0.05 + 0.9 * t);
      g.fillRect(LEFT + c * cw, TOP + PLOT_H - (r + 1) * rh, Math.ceil(cw), Math.ceil(rh));
    }
  g.strokeStyle = RULE;
  g.strokeRect(LEFT, TOP, PLOT_W, PLOT_H);
}

function axes(
  g: SKRSContext2D,
  x: [number, number],
  y: [number, number],
  xLabel: string,
  yLabel: string,
): void {
  g.fillStyle = INK_SOFT;
  g.font = '12px SightlineMono';
  for (let i = 0; i <= 4; i++) {
    const xv = x[0] + ((x[1] - x[0]) * i) / 4;
    g.fillText(fmt(xv, 4), LEFT + (PLOT_W * i) / 4 - 12, TOP + PLOT_H + 16);
    const yv = y[0] + ((y[1] - y[0]) * i) / 4;
    g.fillText(fmt(yv, 4), 8, TOP + PLOT_H - (PLOT_H * i) / 4 + 4);
  }
  g.font = '13px SightlineSans';
  g.fillStyle = INK;
  g.fillText(xLabel, LEFT + PLOT_W / 2 - 40, TOP + PLOT_H + 36);
  g.save();
  g.translate(16, TOP + PLOT_H / 2 + 40);
  g.rotate(-Math.PI / 2);
  g.fillText(yLabel, 0, 0);
  g.restore();
}

function colourBar(g: SKRSContext2D, lo: number, hi: number, label: string): void {
  const x = LEFT + PLOT_W + 30;
  for (let i = 0; i < PLOT_H; i++) {
    g.fillStyle = interpolateMagma(0.05 + (0.9 * (PLOT_H - i)) / PLOT_H);
    g.fillRect(x, TOP + i, 16, 1);
  }
  g.fillStyle = INK_SOFT;
  g.font = '12px SightlineMono';
  g.fillText(fmt(hi, 3), x + 22, TOP + 10);
  g.fillText(fmt(lo, 3), x + 22, TOP + PLOT_H);
  g.font = '12px SightlineSans';
  g.fillText(label, x - 4, TOP + PLOT_H + 36);
}

function frame(title: string, subtitle: string) {
  registerFonts();
  const canvas = createCanvas(W, H);
  const g = canvas.getContext('2d');
  g.fillStyle = PAPER;
  g.fillRect(0, 0, W, H);
  g.fillStyle = INK;
  g.font = '600 16px SightlineSans';
  g.fillText(title, LEFT, 24);
  g.font = '13px SightlineSans';
  g.fillStyle = INK_SOFT;
  g.fillText(subtitle, LEFT, 44);
  return { canvas, g };
}

/** The dynamic spectrum (flags filled for the colours, drawn in their own colour on top). */
export function drawDynspec(r: ScintResult): Uint8Array {
  const d = r.pictures.dynspec;
  const { canvas, g } = frame(
    `${r.source}${r.mjd ? ` · MJD ${r.mjd}` : ''} · dynamic spectrum`,
    `${(100 * r.rfi.flagged_fraction).toFixed(1)}% flagged (${r.rfi.channels.length} channels, ${r.rfi.subints_flagged.length} sub-integrations, ${r.rfi.pixels_flagged} pixels) · flagged pixels in blue-grey`,
  );
  // rows of the picture are frequencies; draw frequency upwards, time to the right
  const lo = quantile(d.values, 0.01);
  const hi = quantile(d.values, 0.995);
  heatmap(g, d.values, d.n_freq, d.n_time, lo, hi, d.flagged);
  axes(g, d.time_s, d.freq_mhz, 'time (s)', 'frequency (MHz)');
  colourBar(g, lo, hi, 'intensity');
  return canvas.toBuffer('image/png');
}

/** The secondary spectrum (positive delays) in dB with the fitted arc. */
export function drawSecondary(r: ScintResult): Uint8Array {
  const s = r.pictures.secondary;
  const arc = r.arc_curvature;
  const { canvas, g } = frame(
    `${r.source}${r.mjd ? ` · MJD ${r.mjd}` : ''} · secondary spectrum`,
    arc
      ? `arc f_τ = η f_t², η = ${fmt(arc.eta_s3, 3)} s³ (${fmt(arc.eta_lo_s3, 3)}–${fmt(arc.eta_hi_s3, 3)}), ${arc.contrast_db.toFixed(1)} dB above the typical parabola`
      : 'no arc fitted',
  );
  const hi = quantile(s.db, 0.999);
  const lo = hi - 50;
  heatmap(g, s.db, s.n_delay, s.n_ft, lo, hi);
  if (s.arc) {
    g.strokeStyle = '#e8f4f8';
    g.setLineDash([6, 4]);
    g.lineWidth = 1.5;
    g.beginPath();
    let started = false;
    for (const p of s.arc) {
      const x = LEFT + ((p.ft_mhz - s.ft_mhz[0]) / (s.ft_mhz[1] - s.ft_mhz[0])) * PLOT_W;
      const y =
        TOP + PLOT_H - ((p.delay_us - s.delay_us[0]) / (s.delay_us[1] - s.delay_us[0])) * PLOT_H;
      if (!started) g.moveTo(x, y);
      else g.lineTo(x, y);
      started = true;
    }
    g.stroke();
    g.setLineDash([]);
  }
  axes(g, s.ft_mhz, s.delay_us, 'conjugate time f_t (mHz)', 'delay τ (µs)');
  colourBar(g, lo, hi, 'power (dB)');
  return canvas.toBuffer('image/png');
}
