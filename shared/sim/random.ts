/**
 * Seeded pseudo-random numbers for simulations and tests: sfc32 (the small fast counting
 * generator of the PractRand test suite) seeded through splitmix32, and Gaussian deviates by the
 * Box–Muller transform. Same seed, same sequence, on every platform.
 */
export interface Rng {
  uniform(): number;
  normal(): number;
  /** integer in [0, n) */
  int(n: number): number;
}

function splitmix32(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
}

export function createRng(seed: number): Rng {
  const init = splitmix32(seed);
  let a = init();
  let b = init();
  let c = init();
  let d = init();
  const next = () => {
    const t = (((a + b) >>> 0) + d) >>> 0;
    d = (d + 1) >>> 0;
    a = b ^ (b >>> 9);
    b = (c + (c << 3)) >>> 0;
    c = ((c << 21) | (c >>> 11)) >>> 0;
    c = (c + t) >>> 0;
    return t;
  };
  for (let i = 0; i < 12; i++) next();
  let spare: number | undefined;
  const uniform = () => (next() + 0.5) / 4294967296;
  return {
    uniform,
    normal() {
      if (spare !== undefined) {
        const s = spare;
        spare = undefined;
        return s;
      }
      const u = uniform();
      const v = uniform();
      const r = Math.sqrt(-2 * Math.log(u));
      spare = r * Math.sin(2 * Math.PI * v);
      return r * Math.cos(2 * Math.PI * v);
    },
    int(n: number) {
      return Math.floor(uniform() * n);
    },
  };
}
