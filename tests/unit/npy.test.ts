import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/formats/errors.js';
import { readNpy } from '../../shared/profiles/npy.js';

/**
 * Hand-built .npy files following the published layout (numpy.lib.format): magic, version,
 * header length (u16 LE for 1.0, u32 LE for 2.0/3.0), a dict literal padded with spaces to a
 * multiple of `align` bytes and ended by '\n', then the values in the order given (storage
 * order: the caller writes Fortran-order files column-major).
 */
interface NpySpec {
  descr: string;
  shape: number[];
  values?: number[];
  fortran?: boolean;
  version?: [number, number];
  /** replaces the whole dict literal */
  dict?: string;
  align?: number;
  /** raw header bytes (after the length field), overriding dict/align */
  headerBytes?: Uint8Array;
  /** bytes appended after the data */
  extra?: number;
  /** bytes cut from the end */
  cut?: number;
}

function pyShape(shape: number[]): string {
  return shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
}

function npy(spec: NpySpec): Uint8Array {
  const [major, minor] = spec.version ?? [1, 0];
  const lenSize = major === 1 ? 2 : 4;
  const dict =
    spec.dict ??
    `{'descr': '${spec.descr}', 'fortran_order': ${spec.fortran ? 'True' : 'False'}, 'shape': ${pyShape(spec.shape)}, }`;
  let header = spec.headerBytes;
  if (!header) {
    const body = new TextEncoder().encode(dict);
    const align = spec.align ?? 64;
    const unpadded = 8 + lenSize + body.length + 1;
    const pad = (align - (unpadded % align)) % align;
    header = new Uint8Array(body.length + pad + 1).fill(0x20);
    header.set(body);
    header[header.length - 1] = 0x0a;
  }
  const values = spec.values ?? [];
  const size = /8$/.test(spec.descr) ? 8 : 4;
  const little = spec.descr[0] !== '>';
  const data = new DataView(new ArrayBuffer(values.length * size));
  values.forEach((v, i) => {
    if (size === 8) data.setFloat64(i * size, v, little);
    else data.setFloat32(i * size, v, little);
  });
  const total = 8 + lenSize + header.length + data.byteLength + (spec.extra ?? 0);
  const out = new Uint8Array(total);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, major, minor]);
  const view = new DataView(out.buffer);
  if (lenSize === 2) view.setUint16(8, header.length, true);
  else view.setUint32(8, header.length, true);
  out.set(header, 8 + lenSize);
  out.set(new Uint8Array(data.buffer), 8 + lenSize + header.length);
  return spec.cut ? out.subarray(0, total - spec.cut) : out;
}

/** The message readNpy throws for these bytes (and that it is an InputError at the header). */
function failure(bytes: Uint8Array): { message: string; column?: string } {
  try {
    readNpy(bytes);
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    const err = e as InputError;
    expect(err.location.file).toBeUndefined();
    return { message: err.message, column: err.location.column };
  }
  throw new Error('readNpy accepted the bytes');
}

// values exactly representable in float32, so both sizes must return them unchanged
const VALUES = [0, -0, 1, -1.5, 0.25, 1024, -3.0517578125e-5, 6.5, 7, 8, -9.75, 2 ** -20];

describe('readNpy: layouts the format allows', () => {
  for (const version of [
    [1, 0],
    [2, 0],
    [3, 0],
  ] as Array<[number, number]>) {
    for (const descr of ['<f4', '<f8', '>f4', '>f8']) {
      it(`version ${version.join('.')}, ${descr}, C order, 2-D`, () => {
        const a = readNpy(npy({ descr, shape: [3, 4], values: VALUES, version }));
        expect(a.shape).toEqual([3, 4]);
        expect(a.descr).toBe(descr);
        expect(a.fortranOrder).toBe(false);
        expect(a.data).toBeInstanceOf(Float64Array);
        expect(Array.from(a.data)).toEqual(VALUES);
      });
    }
  }

  it('float32 values come back as the float64 of the stored single (no rounding to decimals)', () => {
    const a = readNpy(npy({ descr: '<f4', shape: [2], values: [0.1, 1e-40] }));
    expect(Array.from(a.data)).toEqual([Math.fround(0.1), Math.fround(1e-40)]);
    expect(a.data[1]).toBeGreaterThan(0); // a subnormal single survives
  });

  it('float64 keeps every bit, including NaN, infinities and subnormals', () => {
    const values = [Number.MIN_VALUE, -Number.MAX_VALUE, Infinity, -Infinity, NaN, 0.1];
    for (const descr of ['<f8', '>f8']) {
      expect(Array.from(readNpy(npy({ descr, shape: [6], values })).data)).toEqual(values);
    }
  });

  for (const descr of ['<f8', '>f4']) {
    it(`Fortran order 2-D (${descr}) is returned in C order`, () => {
      // C order [[1, 2, 3], [4, 5, 6]] stored column-major
      const a = readNpy(npy({ descr, shape: [2, 3], fortran: true, values: [1, 4, 2, 5, 3, 6] }));
      expect(a.fortranOrder).toBe(true);
      expect(a.shape).toEqual([2, 3]);
      expect(Array.from(a.data)).toEqual([1, 2, 3, 4, 5, 6]);
    });
  }

  it('Fortran order 3-D: element (i, j, k) lands at i·12 + j·4 + k', () => {
    const [n0, n1, n2] = [2, 3, 4];
    const stored: number[] = [];
    // column-major: first index fastest; the value encodes its C-order position
    for (let k = 0; k < n2; k++)
      for (let j = 0; j < n1; j++) for (let i = 0; i < n0; i++) stored.push(i * 12 + j * 4 + k);
    const a = readNpy(npy({ descr: '<f8', shape: [n0, n1, n2], fortran: true, values: stored }));
    expect(Array.from(a.data)).toEqual(Array.from({ length: 24 }, (_, i) => i));
  });

  it('1-D arrays, Fortran flag on 1-D, 0-D scalars and empty arrays', () => {
    expect(Array.from(readNpy(npy({ descr: '<f8', shape: [3], values: [1, 2, 3] })).data)).toEqual([
      1, 2, 3,
    ]);
    const f1 = readNpy(npy({ descr: '<f8', shape: [3], fortran: true, values: [1, 2, 3] }));
    expect(Array.from(f1.data)).toEqual([1, 2, 3]);
    const scalar = readNpy(npy({ descr: '>f8', shape: [], dict: undefined, values: [42.5] }));
    expect(scalar.shape).toEqual([]);
    expect(Array.from(scalar.data)).toEqual([42.5]);
    const empty = readNpy(npy({ descr: '<f4', shape: [0, 64] }));
    expect(empty.shape).toEqual([0, 64]);
    expect(empty.data.length).toBe(0);
  });

  it('header variants: double quotes, other key order, no trailing comma, Python 2 longs', () => {
    const values = [1, 2, 3, 4, 5, 6];
    for (const dict of [
      `{"descr": "<f8", "fortran_order": False, "shape": (2, 3)}`,
      `{'shape': (2, 3), 'fortran_order': False, 'descr': '<f8'}`,
      `{'descr':'<f8','fortran_order':False,'shape':(2L, 3L),}`,
      `{ 'descr' : '<f8' ,\t'fortran_order' : False , 'shape' : ( 2 , 3 , ) }`,
    ]) {
      const a = readNpy(npy({ descr: '<f8', shape: [2, 3], dict, values }));
      expect(a.shape).toEqual([2, 3]);
      expect(Array.from(a.data)).toEqual(values);
    }
  });

  it('any preamble length: old 16-byte alignment, none at all, no final newline', () => {
    const values = [1, 2, 3];
    for (const align of [16, 1]) {
      expect(Array.from(readNpy(npy({ descr: '<f8', shape: [3], values, align })).data)).toEqual(
        values,
      );
    }
    const bare = new TextEncoder().encode(
      `{'descr': '<f8', 'fortran_order': False, 'shape': (3,)}`,
    );
    expect(
      Array.from(readNpy(npy({ descr: '<f8', shape: [3], values, headerBytes: bare })).data),
    ).toEqual(values);
  });

  it('reads from a Uint8Array that is a view into a larger buffer', () => {
    const bytes = npy({ descr: '<f8', shape: [2], values: [3, 4] });
    const big = new Uint8Array(bytes.length + 13);
    big.set(bytes, 13);
    expect(Array.from(readNpy(big.subarray(13)).data)).toEqual([3, 4]);
  });

  it('reads a Node Buffer at an unaligned offset, and leaves its bytes as they were', () => {
    // Buffer#slice is a view, not a copy: the data must still be copied before it is viewed as
    // float64 (which needs an 8-byte-aligned offset) and before big-endian bytes are swapped
    for (const descr of ['>f8', '<f8', '>f4']) {
      const bytes = npy({ descr, shape: [2], values: [3, 4] });
      const pool = Buffer.alloc(bytes.length + 3);
      pool.set(bytes, 3);
      const buf = pool.subarray(3);
      const before = Buffer.from(buf);
      expect(Array.from(readNpy(buf).data)).toEqual([3, 4]);
      expect(buf.equals(before)).toBe(true);
    }
  });
});

describe('readNpy: refuses what it cannot read, and says why', () => {
  it('wrong magic and empty files', () => {
    const csv = new TextEncoder().encode('freq_mhz,bin,value\n');
    expect(failure(csv)).toEqual({
      message:
        'column "header": not a .npy file: it does not start with the bytes \\x93NUMPY (found freq_m)',
      column: 'header',
    });
    expect(failure(new Uint8Array(0)).message).toBe(
      'column "header": not a .npy file: it does not start with the bytes \\x93NUMPY (found an empty file)',
    );
    const gz = new Uint8Array([0x1f, 0x8b, 0x08, 0x00, 0, 0, 0, 0]);
    expect(failure(gz).message).toContain('(found \\x1f\\x8b\\x08\\x00\\x00\\x00)');
  });

  it('unsupported versions', () => {
    for (const [version, text] of [
      [[4, 0], '4.0'],
      [[1, 1], '1.1'],
      [[0, 0], '0.0'],
    ] as Array<[[number, number], string]>) {
      expect(failure(npy({ descr: '<f8', shape: [1], values: [1], version })).message).toBe(
        `column "header": unsupported .npy format version ${text} (Sightline reads versions 1.0, 2.0 and 3.0)`,
      );
    }
  });

  it('files that end inside the preamble or the header', () => {
    const whole = npy({ descr: '<f8', shape: [1], values: [1] });
    expect(failure(whole.subarray(0, 7)).message).toBe(
      'column "header": the file ends inside the version bytes',
    );
    expect(failure(whole.subarray(0, 9)).message).toBe(
      'column "header": the file ends inside the header length',
    );
    expect(failure(whole.subarray(0, 40)).message).toBe(
      'column "header": the file ends inside the header: the header length says 118 bytes, 30 are present',
    );
  });

  it('dtypes other than little/big-endian float32/float64, naming the dtype found', () => {
    const cases: Array<[string, string]> = [
      ['<i8', "unsupported dtype '<i8' (signed integers)"],
      ['<u2', "unsupported dtype '<u2' (unsigned integers)"],
      ['|b1', "unsupported dtype '|b1' (booleans or bytes)"],
      ['<c16', "unsupported dtype '<c16' (complex numbers)"],
      ['|O', "unsupported dtype '|O' (Python objects, stored as a pickle)"],
      ['<f2', "unsupported dtype '<f2' (a float size Sightline does not read)"],
      ['<f16', "unsupported dtype '<f16' (a float size Sightline does not read)"],
      ['<U8', "unsupported dtype '<U8' (text)"],
      ['|f4', "unsupported dtype '|f4' (a float without an explicit byte order '<' or '>')"],
      ['float64', "unsupported dtype 'float64'"],
      ['=f8', "unsupported dtype '=f8' (a float without an explicit byte order '<' or '>')"],
      ['<x9', "unsupported dtype '<x9'"],
    ];
    for (const [descr, reason] of cases) {
      expect(failure(npy({ descr, shape: [2], values: [1, 2] })).message).toBe(
        `column "header": ${reason}; Sightline reads float32 or float64 arrays (<f4, <f8, >f4, >f8)`,
      );
    }
    const structured = `{'descr': [('re', '<f8'), ('im', '<f8')], 'fortran_order': False, 'shape': (2,), }`;
    expect(
      failure(npy({ descr: '<f8', shape: [2], dict: structured, values: [1, 2, 3, 4] })),
    ).toEqual({
      message:
        'column "header": unsupported dtype: a structured dtype (a list of fields); Sightline reads float32 or float64 arrays (<f4, <f8, >f4, >f8)',
      column: 'header',
    });
  });

  it('malformed header dicts', () => {
    const cases: Array<[string, string]> = [
      [
        `{'descr': '<f8', 'fortran_order': False, 'shape': (2,)`,
        "malformed header: expected ',' or '}', but the header ends there",
      ],
      [`'descr'`, 'malformed header: expected a dict literal { … }'],
      [``, 'malformed header: the header is empty'],
      [`{'descr': '<f8', 'shape': (2,)}`, "malformed header: missing key 'fortran_order'"],
      [`{}`, "malformed header: missing keys 'descr', 'fortran_order', 'shape'"],
      [
        `{'descr': '<f8', 'fortran_order': False, 'shape': (2,), 'order': 'C'}`,
        "malformed header: unexpected key 'order' (a .npy header has exactly 'descr', 'fortran_order' and 'shape')",
      ],
      [
        `{'descr': '<f8', 'fortran_order': 0, 'shape': (2,)}`,
        "malformed header: 'fortran_order' must be True or False, found 0",
      ],
      [
        `{'descr': '<f8', 'fortran_order': false, 'shape': (2,)}`,
        "malformed header: unexpected name 'false' at character 35 (near \"false, 'shape': (2,)\")",
      ],
      [
        `{'descr': '<f8', 'fortran_order': False, 'shape': [2]}`,
        "malformed header: 'shape' must be a tuple, found a list",
      ],
      [
        `{'descr': '<f8', 'fortran_order': False, 'shape': (2,)} trailing`,
        'malformed header: unexpected text after the dict at character 57 (near "trailing")',
      ],
      [
        `{'descr': '<f8, 'fortran_order': False, 'shape': (2,)}`,
        "malformed header: expected ',' or '}' at character 18 (near \"fortran_order': Fals\")",
      ],
      [
        `{'descr': '<f8', 'descr': '<f8', 'fortran_order': False, 'shape': (2,)}`,
        "malformed header: key 'descr' appears twice at character 18 (near \"'descr': '<f8', 'for\")",
      ],
      [
        `{'descr': __import__('os'), 'fortran_order': False, 'shape': (2,)}`,
        "malformed header: unexpected name '__import__' at character 11 (near \"__import__('os'), 'f\")",
      ],
    ];
    for (const [dict, reason] of cases) {
      expect(failure(npy({ descr: '<f8', shape: [2], dict, values: [1, 2] }))).toEqual({
        message: `column "header": ${reason}`,
        column: 'header',
      });
    }
  });

  it('non-integer or negative shapes', () => {
    const dict = (shape: string) => `{'descr': '<f8', 'fortran_order': False, 'shape': ${shape}}`;
    expect(failure(npy({ descr: '<f8', shape: [2], dict: dict('(2, -3)') })).message).toBe(
      `column "header": malformed header: 'shape' must hold non-negative integers, found -3 on axis 1`,
    );
    expect(failure(npy({ descr: '<f8', shape: [2], dict: dict('(2.5,)') })).message).toBe(
      `column "header": malformed header: 'shape' must hold non-negative integers, found 2.5 on axis 0`,
    );
    expect(failure(npy({ descr: '<f8', shape: [2], dict: dict("('2',)") })).message).toBe(
      `column "header": malformed header: 'shape' must hold non-negative integers, found '2' on axis 0`,
    );
  });

  it('a version 3.0 header that is not UTF-8', () => {
    const header = new TextEncoder().encode(
      `{'descr': '<f8', 'fortran_order': False, 'shape': (1,)}   \n`,
    );
    header[header.length - 2] = 0xff;
    expect(
      failure(npy({ descr: '<f8', shape: [1], values: [1], version: [3, 0], headerBytes: header }))
        .message,
    ).toBe('column "header": the version 3.0 header is not valid UTF-8');
  });

  it('truncated data, saying how many bytes were expected and how many are present', () => {
    const bytes = npy({ descr: '<f8', shape: [4, 32], values: new Array(128).fill(1), cut: 24 });
    expect(failure(bytes)).toEqual({
      message:
        'column "data": truncated data: shape (4, 32) of <f8 needs 1024 bytes after the header, but only 1000 are present',
      column: 'data',
    });
    expect(failure(npy({ descr: '>f4', shape: [5], values: [] })).message).toBe(
      'column "data": truncated data: shape (5,) of >f4 needs 20 bytes after the header, but only 0 are present',
    );
  });

  it('trailing bytes after the array', () => {
    const bytes = npy({ descr: '<f4', shape: [2, 16], values: new Array(32).fill(1), extra: 3 });
    expect(failure(bytes)).toEqual({
      message:
        'column "data": trailing bytes: shape (2, 16) of <f4 needs 128 bytes after the header, but 131 are present (3 extra bytes after the array)',
      column: 'data',
    });
  });

  it('a shape too large to address is truncated, not an overflow', () => {
    const dict = `{'descr': '<f8', 'fortran_order': False, 'shape': (100000000000, 100000000000)}`;
    expect(failure(npy({ descr: '<f8', shape: [1], dict })).message).toMatch(
      /^column "data": truncated data: shape \(100000000000, 100000000000\) of <f8 needs 8e\+22 bytes after the header, but only 0 are present$/,
    );
  });
});
