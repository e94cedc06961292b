import { describe, expect, it } from 'vitest';
import { SingularDesignError, weightedLeastSquares } from '../../shared/fit/wls.js';

describe('weighted least squares', () => {
  it('recovers an exact line and its textbook covariance', () => {
    // y = 2 + 3x, σ = 1: cov = (AᵀA)⁻¹ for x = 0..4 → var(a) = 0.6, var(b) = 0.1, cov = −0.2
    const n = 5;
    const A = new Float64Array(n * 2);
    const y = new Float64Array(n);
    const s = new Float64Array(n).fill(1);
    for (let i = 0; i < n; i++) {
      A[i * 2] = 1;
      A[i * 2 + 1] = i;
      y[i] = 2 + 3 * i;
    }
    const f = weightedLeastSquares(A, y, s, n, 2);
    expect(f.params[0]).toBeCloseTo(2, 12);
    expect(f.params[1]).toBeCloseTo(3, 12);
    expect(f.cov[0]).toBeCloseTo(0.6, 12);
    expect(f.cov[3]).toBeCloseTo(0.1, 12);
    expect(f.cov[1]).toBeCloseTo(-0.2, 12);
    expect(f.chi2).toBeCloseTo(0, 20);
    expect(f.dof).toBe(3);
  });

  it('weights: a point with a huge error has no pull', () => {
    const A = new Float64Array([1, 1, 1]);
    const f = weightedLeastSquares(
      A,
      new Float64Array([1, 1, 100]),
      new Float64Array([1, 1, 1e9]),
      3,
      1,
    );
    expect(f.params[0]).toBeCloseTo(1, 9);
  });

  it('handles columns of very different scale (offset in µs, ν⁻² in MHz⁻²)', () => {
    const freqs = [600, 800, 1400, 3000];
    const n = freqs.length;
    const A = new Float64Array(n * 2);
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      A[i * 2] = 1;
      A[i * 2 + 1] = 1 / freqs[i] ** 2;
      y[i] = 5 + 4.1e9 * A[i * 2 + 1];
    }
    const f = weightedLeastSquares(A, y, new Float64Array(n).fill(0.1), n, 2);
    expect(Math.abs(f.params[1] / 4.1e9 - 1)).toBeLessThan(1e-12);
  });

  it('throws on a rank-deficient design', () => {
    const A = new Float64Array([1, 2, 1, 2, 1, 2]);
    expect(() =>
      weightedLeastSquares(A, new Float64Array(3), new Float64Array(3).fill(1), 3, 2),
    ).toThrow(SingularDesignError);
  });
});

describe('closed-form weighted line', () => {
  it('equals the QR solution, covariance and χ² for the same data', async () => {
    const { weightedLine } = await import('../../shared/fit/wls.js');
    const x = new Float64Array([13716, 9000, 4000, 2100, 1500, 900]);
    const y = new Float64Array([12.1, 8.3, 3.9, 2.2, 1.4, 0.8]);
    const s = new Float64Array([0.5, 0.4, 0.3, 0.3, 0.2, 0.6]);
    const A = new Float64Array(12);
    x.forEach((v, i) => {
      A[2 * i] = 1;
      A[2 * i + 1] = v;
    });
    const q = weightedLeastSquares(A, y, s, 6, 2);
    const l = weightedLine(x, y, s, 6);
    for (let i = 0; i < 2; i++) expect(Math.abs(l.params[i] / q.params[i] - 1)).toBeLessThan(1e-12);
    for (let i = 0; i < 4; i++) expect(Math.abs(l.cov[i] / q.cov[i] - 1)).toBeLessThan(1e-11);
    expect(Math.abs(l.chi2 / q.chi2 - 1)).toBeLessThan(1e-11);
    expect(() => weightedLine(new Float64Array([3, 3, 3]), y, s, 3)).toThrow(SingularDesignError);
  });
});
