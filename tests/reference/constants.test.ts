import { describe, expect, it } from 'vitest';
import { dispersionConstant, AU_PC } from '../../shared/physics/constants.js';
import { python, pythonAvailable } from '../helpers/python.js';

describe.skipIf(!pythonAvailable)(
  'dispersion constant against astropy.constants (Debian python3-astropy)',
  () => {
    it('K = e²/(2π m_e c) from astropy equals ours to 1e-9 relative', () => {
      const k = python<{ k: number; codata: string; au_pc: number }>(`
import json, numpy as np
from astropy import constants as c, units as u
k = (c.e.gauss**2 / (2*np.pi*c.m_e*c.c)).to(u.s*u.MHz**2*u.cm**3/u.pc).value
print(json.dumps({"k": k, "codata": c.codata.__name__, "au_pc": (1*u.au).to(u.pc).value}))`);
      expect(k.codata).toMatch(/codata2018/);
      expect(Math.abs(dispersionConstant('physical').value / k.k - 1)).toBeLessThan(1e-9);
      expect(Math.abs(AU_PC / k.au_pc - 1)).toBeLessThan(1e-12);
    });
  },
);
