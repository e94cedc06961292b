import FFT from 'fft.js';

/** Smallest power of two ≥ n (n ≥ 1). */
export function nextPow2(n: number): number {
  let p = 1;
  while (p < n) p <<= 1;
  return p;
}

/**
 * Two-dimensional complex DFT on a power-of-two grid (rows × cols), through `fft.js`: every row,
 * then every column (gathered into a contiguous buffer), X_(k,l) = Σ x_(m,n) e^(−2πi(km/R + ln/C))
 * (numpy.fft.fft2's sign and scaling; the inverse divides by R·C). Data are interleaved
 * (re, im) in row-major order. Rows that are entirely zero (zero padding) are skipped on the way
 * in.
 */
export class Fft2 {
  private readonly rowFft: FFT;
  private readonly colFft: FFT;
  private readonly rowIn: Float64Array;
  private readonly rowOut: Float64Array;
  private readonly colIn: Float64Array;
  private readonly colOut: Float64Array;

  constructor(
    readonly rows: number,
    readonly cols: number,
  ) {
    if (rows < 2 || cols < 2 || rows & (rows - 1) || cols & (cols - 1))
      throw new RangeError(`2-D FFT sizes must be powers of two ≥ 2, got ${rows} × ${cols}`);
    this.rowFft = new FFT(cols);
    this.colFft = new FFT(rows);
    this.rowIn = new Float64Array(2 * cols);
    this.rowOut = new Float64Array(2 * cols);
    this.colIn = new Float64Array(2 * rows);
    this.colOut = new Float64Array(2 * rows);
  }

  /** In place: forward (sign −1) or inverse (sign +1, scaled by 1/(R·C)). */
  transform(data: Float64Array, inverse = false, nonZeroRows = this.rows): void {
    const { rows, cols, rowIn, rowOut, colIn, colOut } = this;
    const rowFft = this.rowFft;
    const colFft = this.colFft;
    const width = 2 * cols;
    for (let r = 0; r < nonZeroRows; r++) {
      const off = r * width;
      rowIn.set(data.subarray(off, off + width));
      if (inverse) rowFft.inverseTransform(rowOut, rowIn);
      else rowFft.transform(rowOut, rowIn);
      data.set(rowOut, off);
    }
    for (let c = 0; c < cols; c++) {
      const base = 2 * c;
      for (let r = 0; r < rows; r++) {
        const i = r * width + base;
        colIn[2 * r] = data[i];
        colIn[2 * r + 1] = data[i + 1];
      }
      if (inverse) colFft.inverseTransform(colOut, colIn);
      else colFft.transform(colOut, colIn);
      for (let r = 0; r < rows; r++) {
        const i = r * width + base;
        data[i] = colOut[2 * r];
        data[i + 1] = colOut[2 * r + 1];
      }
    }
  }
}

/**
 * Autocorrelations of two real rows × cols arrays at once, zero-padded to powers of two ≥ twice
 * each size (so no lag wraps around): a = x + i·y is transformed once; X = (A_k + Ā_(−k))/2 and
 * Y = (A_k − Ā_(−k))/(2i) separate the two spectra, and one inverse transform of |X|² + i|Y|²
 * returns both autocorrelations, R_x(δm, δn) = Σ x(m, n)·x(m + δm, n + δn), as its real and
 * imaginary parts (Wiener–Khinchin). Lags 0 … ±(size − 1) are returned on a
 * (2·rows − 1) × (2·cols − 1) grid centred on zero lag.
 */
export function autocorrelate2(
  x: Float64Array,
  y: Float64Array,
  rows: number,
  cols: number,
): { rx: Float64Array; ry: Float64Array; lagRows: number; lagCols: number } {
  const R = nextPow2(2 * rows);
  const C = nextPow2(2 * cols);
  const a = new Float64Array(2 * R * C);
  for (let r = 0; r < rows; r++) {
    const src = r * cols;
    const dst = 2 * r * C;
    for (let c = 0; c < cols; c++) {
      a[dst + 2 * c] = x[src + c];
      a[dst + 2 * c + 1] = y[src + c];
    }
  }
  const fft = new Fft2(R, C);
  fft.transform(a, false, rows);
  // separate the two spectra and form |X|² + i|Y|² in place: positions k and −k hold the same
  // values (|X_−k| = |X_k| for real x), so each pair is computed once and written twice
  for (let k = 0; k < R; k++) {
    const kn = (R - k) % R;
    for (let l = 0; l < C; l++) {
      const i = 2 * (k * C + l);
      const j = 2 * (kn * C + ((C - l) % C));
      if (j < i) continue;
      const ar = a[i];
      const ai = a[i + 1];
      const br = a[j];
      const bi = -a[j + 1]; // conj(A_(−k))
      const xr = (ar + br) / 2;
      const xi = (ai + bi) / 2;
      const yr = (ai - bi) / 2; // Y = (A − Ā_(−k))/(2i)
      const yi = -(ar - br) / 2;
      const px = xr * xr + xi * xi;
      const py = yr * yr + yi * yi;
      a[i] = px;
      a[i + 1] = py;
      a[j] = px;
      a[j + 1] = py;
    }
  }
  const b = a;
  fft.transform(b, true);
  const lagRows = 2 * rows - 1;
  const lagCols = 2 * cols - 1;
  const rx = new Float64Array(lagRows * lagCols);
  const ry = new Float64Array(lagRows * lagCols);
  for (let dr = -(rows - 1); dr <= rows - 1; dr++) {
    const srcRow = ((dr % R) + R) % R;
    const out = (dr + rows - 1) * lagCols;
    for (let dc = -(cols - 1); dc <= cols - 1; dc++) {
      const srcCol = ((dc % C) + C) % C;
      const i = 2 * (srcRow * C + srcCol);
      rx[out + dc + cols - 1] = b[i];
      ry[out + dc + cols - 1] = b[i + 1];
    }
  }
  return { rx, ry, lagRows, lagCols };
}
