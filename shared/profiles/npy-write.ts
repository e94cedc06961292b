/**
 * Write a float array as a NumPy .npy file (format version 1.0, little-endian, C order), per the
 * published format specification: magic "\x93NUMPY", version, header length (u16 LE), a Python
 * dict literal padded with spaces to a multiple of 64 bytes ending in "\n", then the data.
 */
export function writeNpy(
  data: ArrayLike<number>,
  shape: number[],
  dtype: '<f4' | '<f8' = '<f4',
): Uint8Array {
  const count = shape.reduce((a, b) => a * b, 1);
  if (count !== data.length)
    throw new RangeError(
      `shape (${shape.join(', ')}) holds ${count} values, data has ${data.length}`,
    );
  const shapeText = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
  let header = `{'descr': '${dtype}', 'fortran_order': False, 'shape': ${shapeText}, }`;
  const preamble = 10;
  const total = Math.ceil((preamble + header.length + 1) / 64) * 64;
  header = header.padEnd(total - preamble - 1, ' ') + '\n';
  const size = dtype === '<f4' ? 4 : 8;
  const out = new Uint8Array(total + count * size);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]);
  const view = new DataView(out.buffer);
  view.setUint16(8, header.length, true);
  for (let i = 0; i < header.length; i++) out[preamble + i] = header.charCodeAt(i);
  for (let i = 0; i < count; i++) {
    if (size === 4) view.setFloat32(total + 4 * i, data[i], true);
    else view.setFloat64(total + 8 * i, data[i], true);
  }
  return out;
}
