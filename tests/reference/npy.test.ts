import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readNpy } from '../../shared/profiles/npy.js';
import { tempDir } from '../helpers/cli.js';
import { python, pythonAvailable } from '../helpers/python.js';

interface Written {
  name: string;
  shape: number[];
  descr: string;
  fortran: boolean;
  /** the values in C order, as float64, printed by json.dumps (repr: shortest exact text) */
  values: number[];
}

// numpy writes every case into a temp dir and prints what it wrote; float32 values go through
// float() so the printed text is the exact double of the stored single.
const SCRIPT = `
import json, os, sys
import numpy as np
out = json.load(sys.stdin)
rng = np.random.default_rng(20240611)

def values(shape, dtype):
    big = 1e30 if dtype == np.float32 else 1e300
    tiny = 1e-40 if dtype == np.float32 else 1e-310   # subnormal in both sizes
    x = rng.standard_normal(shape) * 10.0 ** rng.uniform(-6, 6, shape)
    flat = x.reshape(-1)
    flat[:6] = [0.0, -0.0, big, -tiny, 1.0 / 3.0, 0.1][: flat.size]
    return x.astype(dtype)

cases = []
def save(name, arr, version=None):
    path = os.path.join(out, name + '.npy')
    if version is None:
        np.save(path, arr)
    else:
        with open(path, 'wb') as f:
            np.lib.format.write_array(f, arr, version=version)
    back = np.load(path)
    cases.append({
        'name': name,
        'shape': list(back.shape),
        'descr': back.dtype.str,
        'fortran': bool(back.flags.f_contiguous and not back.flags.c_contiguous),
        'values': [float(v) for v in back.astype(np.float64).ravel(order='C')],
    })

save('f8_c', values((7, 33), np.float64))
save('f4_c', values((7, 33), np.float32))
save('f8_big', values((5, 16), np.float64).astype('>f8'))
save('f4_big', values((5, 16), np.float32).astype('>f4'))
save('f8_fortran', np.asfortranarray(values((6, 40), np.float64)))
save('f4_big_fortran', np.asfortranarray(values((3, 17), np.float32).astype('>f4')))
save('f8_fortran_3d', np.asfortranarray(values((3, 4, 5), np.float64)))
save('f8_1d', values((64,), np.float64))
save('f8_v2', values((4, 20), np.float64), version=(2, 0))
save('f4_big_v3', values((4, 20), np.float32).astype('>f4'), version=(3, 0))
save('f8_fortran_v3', np.asfortranarray(values((9, 11), np.float64)), version=(3, 0))
print(json.dumps({'numpy': np.__version__, 'cases': cases}))
`;

describe.skipIf(!pythonAvailable)('.npy reader against numpy.save (Debian python3-numpy)', () => {
  let dir = '';
  let cleanup = () => {};
  let ref: { numpy: string; cases: Written[] };

  beforeAll(() => {
    ({ dir, cleanup } = tempDir('sightline-npy-'));
    ref = python<{ numpy: string; cases: Written[] }>(SCRIPT, dir);
  });
  afterAll(() => cleanup());

  it('numpy wrote every layout the reader claims (C, Fortran, both byte orders, v1/v2/v3)', () => {
    const fortran = ref.cases.filter((c) => c.fortran).map((c) => c.name);
    expect(fortran).toEqual(['f8_fortran', 'f4_big_fortran', 'f8_fortran_3d', 'f8_fortran_v3']);
    const versions = ref.cases.map((c) => readFileSync(join(dir, `${c.name}.npy`))[6]);
    expect(new Set(versions)).toEqual(new Set([1, 2, 3]));
  });

  it('every array numpy.save / numpy.lib.format.write_array wrote comes back bit for bit', () => {
    expect(ref.cases.length).toBe(11);
    for (const c of ref.cases) {
      const a = readNpy(readFileSync(join(dir, `${c.name}.npy`)));
      expect({ name: c.name, shape: a.shape, descr: a.descr, fortran: a.fortranOrder }).toEqual({
        name: c.name,
        shape: c.shape,
        descr: c.descr,
        fortran: c.fortran,
      });
      // exact equality (Object.is per element, so -0 stays -0): the reader does no arithmetic
      expect(Array.from(a.data), c.name).toEqual(c.values);
    }
  });
});
