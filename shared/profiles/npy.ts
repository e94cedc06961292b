import { InputError, quoteInput } from '../formats/errors.js';

/**
 * Reader for NumPy's `.npy` format, written to its published specification (numpy.lib.format,
 * NEP 1): the magic `\x93NUMPY`, a major and minor version byte, the header length (u16 LE in
 * version 1.0, u32 LE in 2.0 and 3.0), a header that is a Python dict literal with the keys
 * 'descr', 'fortran_order' and 'shape' (latin-1 text before 3.0, UTF-8 from 3.0), padded with
 * spaces and ended by '\n', then the raw array data. The preamble is padded to a multiple of 64
 * bytes (16 in old files); any length is accepted here.
 *
 * Only the float dtypes profile cubes and dynamic spectra use are read: little- or big-endian
 * float32 and float64. Everything else (integers, complex, strings, structured dtypes, object
 * arrays — which would hold a pickle) is refused with a message naming the dtype found.
 */

export type NpyDescr = '<f4' | '<f8' | '>f4' | '>f8';

export interface NpyArray {
  shape: number[];
  /** the dtype as the file gave it */
  descr: NpyDescr;
  /** the file stored the data in Fortran (column-major) order; `data` is C order regardless */
  fortranOrder: boolean;
  /** the values as float64 in C (row-major) order */
  data: Float64Array;
}

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93NUMPY
const SUPPORTED: readonly NpyDescr[] = ['<f4', '<f8', '>f4', '>f8'];

/**
 * Limits on what a header may claim, each named in its error message. numpy writes headers of
 * a few hundred bytes and itself refuses to read headers over 10 000 bytes unless told to
 * (numpy.lib.format `max_header_size`, from memory); arrays have at most 64 axes (NumPy 2's
 * NPY_MAXDIMS, from memory); the dict literal is two levels deep ({ … (…) }), so 16 is plenty.
 */
export const NPY_MAX_HEADER_BYTES = 65_536;
export const NPY_MAX_AXES = 64;
const MAX_LITERAL_DEPTH = 16;

const headerError = (reason: string) => new InputError(reason, { column: 'header' });

/** Parse a whole `.npy` file. Throws InputError (column "header" or "data"; no file name). */
export function readNpy(bytes: Uint8Array): NpyArray {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.length < MAGIC.length || MAGIC.some((b, i) => bytes[i] !== b)) {
    throw headerError(
      `not a .npy file: it does not start with the bytes \\x93NUMPY (found ${describeStart(bytes)})`,
    );
  }
  if (bytes.length < 8) throw headerError('the file ends inside the version bytes');
  const major = bytes[6];
  const minor = bytes[7];
  if (!((major === 1 || major === 2 || major === 3) && minor === 0)) {
    throw headerError(
      `unsupported .npy format version ${major}.${minor} (Sightline reads versions 1.0, 2.0 and 3.0)`,
    );
  }
  const lenSize = major === 1 ? 2 : 4;
  const headerStart = 8 + lenSize;
  if (bytes.length < headerStart) throw headerError('the file ends inside the header length');
  const headerLen = major === 1 ? view.getUint16(8, true) : view.getUint32(8, true);
  if (headerLen > NPY_MAX_HEADER_BYTES) {
    throw headerError(
      `the header length says ${headerLen} bytes; Sightline reads .npy headers of at most ${NPY_MAX_HEADER_BYTES} bytes (numpy writes a few hundred)`,
    );
  }
  const dataStart = headerStart + headerLen;
  if (bytes.length < dataStart) {
    throw headerError(
      `the file ends inside the header: the header length says ${headerLen} bytes, ${bytes.length - headerStart} are present`,
    );
  }
  const headerBytes = bytes.subarray(headerStart, dataStart);
  const header = parseHeader(major === 3 ? decodeUtf8(headerBytes) : decodeLatin1(headerBytes));

  const count = header.shape.reduce((a, b) => a * b, 1);
  const itemSize = header.descr.endsWith('8') ? 8 : 4;
  const expected = count * itemSize;
  const present = bytes.length - dataStart;
  const shapeText = formatShape(header.shape);
  if (!Number.isSafeInteger(expected) || present < expected) {
    throw new InputError(
      `truncated data: shape ${shapeText} of ${header.descr} needs ${Number.isFinite(expected) ? expected : 'more than 1e308'} bytes after the header, but only ${present} are present`,
      { column: 'data' },
    );
  }
  if (present > expected) {
    throw new InputError(
      `trailing bytes: shape ${shapeText} of ${header.descr} needs ${expected} bytes after the header, but ${present} are present (${present - expected} extra bytes after the array)`,
      { column: 'data' },
    );
  }

  // a copy in a fresh buffer: aligned for the typed-array view, and never a view into the caller's
  // bytes (a Node Buffer's slice() is a view, and byte swapping would then change the caller's)
  const raw = decodeFloats(
    new Uint8Array(bytes.subarray(dataStart)),
    itemSize,
    header.descr[0] === '<',
  );
  const data = header.fortranOrder && header.shape.length > 1 ? fortranToC(raw, header.shape) : raw;
  return { shape: header.shape, descr: header.descr, fortranOrder: header.fortranOrder, data };
}

const HOST_LITTLE = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/**
 * Values of a fresh copy of the data bytes as float64: reversed in place when the file's byte
 * order is not the host's, then read through a typed array (much faster than DataView per value).
 */
function decodeFloats(copy: Uint8Array, itemSize: 4 | 8, little: boolean): Float64Array {
  if (little !== HOST_LITTLE) {
    for (let i = 0; i < copy.length; i += itemSize) {
      for (let a = i, b = i + itemSize - 1; a < b; a++, b--) {
        const t = copy[a];
        copy[a] = copy[b];
        copy[b] = t;
      }
    }
  }
  const n = copy.length / itemSize;
  return itemSize === 8
    ? new Float64Array(copy.buffer, copy.byteOffset, n)
    : new Float64Array(new Float32Array(copy.buffer, copy.byteOffset, n));
}

/** Reorder column-major values to row-major for any number of dimensions. */
function fortranToC(src: Float64Array, shape: number[]): Float64Array {
  const n = shape.length;
  const out = new Float64Array(src.length);
  if (src.length === 0) return out;
  if (n === 2) {
    // the common case, as a plain transpose in tiles (cache-friendly): src[j·n0 + i] is (i, j)
    const [n0, n1] = shape;
    const T = 64;
    for (let i0 = 0; i0 < n0; i0 += T) {
      const i1 = Math.min(i0 + T, n0);
      for (let j0 = 0; j0 < n1; j0 += T) {
        const j1 = Math.min(j0 + T, n1);
        for (let i = i0; i < i1; i++)
          for (let j = j0; j < j1; j++) out[i * n1 + j] = src[j * n0 + i];
      }
    }
    return out;
  }
  // Fortran strides (in elements): stride[k] = shape[0]·…·shape[k-1]
  const stride = new Array<number>(n);
  stride[0] = 1;
  for (let k = 1; k < n; k++) stride[k] = stride[k - 1] * shape[k - 1];
  const index = new Array<number>(n).fill(0);
  let offset = 0;
  for (let i = 0; i < out.length; i++) {
    out[i] = src[offset];
    // advance the C-order multi-index (last axis fastest), keeping the Fortran offset in step
    for (let k = n - 1; k >= 0; k--) {
      if (++index[k] < shape[k]) {
        offset += stride[k];
        break;
      }
      offset -= (shape[k] - 1) * stride[k];
      index[k] = 0;
    }
  }
  return out;
}

/** A shape as Python writes it, `(3,)` or `(2, 3)`; more than 6 axes are shortened. */
export function formatShape(shape: number[]): string {
  if (shape.length > 6) {
    return `(${shape.slice(0, 3).join(', ')}, …, ${shape.slice(-2).join(', ')}) (${shape.length} axes)`;
  }
  return shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
}

function describeStart(bytes: Uint8Array): string {
  const head = Array.from(bytes.subarray(0, 6));
  if (head.length === 0) return 'an empty file';
  return head
    .map((b) =>
      b >= 0x20 && b < 0x7f ? String.fromCharCode(b) : `\\x${b.toString(16).padStart(2, '0')}`,
    )
    .join('');
}

function decodeLatin1(bytes: Uint8Array): string {
  let s = '';
  for (let i = 0; i < bytes.length; i++) s += String.fromCharCode(bytes[i]);
  return s;
}

function decodeUtf8(bytes: Uint8Array): string {
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw headerError('the version 3.0 header is not valid UTF-8');
  }
}

// ---------------------------------------------------------------------------------------------
// The header dict: a Python literal, parsed by a small tokenizer (never evaluated).

type PyValue = string | number | boolean | null | PyValue[] | PyTuple | PyDict;
interface PyTuple {
  tuple: PyValue[];
}
interface PyDict {
  dict: Map<string, PyValue>;
}

interface Header {
  descr: NpyDescr;
  fortranOrder: boolean;
  shape: number[];
}

const KEYS = ['descr', 'fortran_order', 'shape'];

function parseHeader(text: string): Header {
  const parser = new LiteralParser(text);
  const value = parser.parseTop();
  if (!isDict(value)) throw headerError('malformed header: expected a dict literal { … }');
  const dict = value.dict;
  for (const key of dict.keys()) {
    if (!KEYS.includes(key)) {
      throw headerError(
        `malformed header: unexpected key ${quoteInput(key, 40, "'")} (a .npy header has exactly 'descr', 'fortran_order' and 'shape')`,
      );
    }
  }
  const missing = KEYS.filter((k) => !dict.has(k));
  if (missing.length) {
    throw headerError(
      `malformed header: missing key${missing.length > 1 ? 's' : ''} ${missing.map((k) => `'${k}'`).join(', ')}`,
    );
  }

  const descr = dict.get('descr')!;
  if (typeof descr !== 'string') {
    const kind = Array.isArray(descr) ? 'a structured dtype (a list of fields)' : describe(descr);
    throw headerError(
      `unsupported dtype: ${kind}; Sightline reads float32 or float64 arrays (${SUPPORTED.join(', ')})`,
    );
  }
  if (!(SUPPORTED as readonly string[]).includes(descr)) {
    throw headerError(
      `unsupported dtype ${quoteInput(descr, 40, "'")}${dtypeHint(descr)}; Sightline reads float32 or float64 arrays (${SUPPORTED.join(', ')})`,
    );
  }

  const fortran = dict.get('fortran_order');
  if (typeof fortran !== 'boolean') {
    throw headerError(
      `malformed header: 'fortran_order' must be True or False, found ${describe(fortran!)}`,
    );
  }

  const shapeValue = dict.get('shape')!;
  if (!isTuple(shapeValue)) {
    throw headerError(`malformed header: 'shape' must be a tuple, found ${describe(shapeValue)}`);
  }
  if (shapeValue.tuple.length > NPY_MAX_AXES) {
    throw headerError(
      `malformed header: 'shape' has ${shapeValue.tuple.length} axes; an array has at most ${NPY_MAX_AXES}`,
    );
  }
  const shape = shapeValue.tuple.map((d, axis) => {
    if (typeof d !== 'number' || !Number.isInteger(d) || d < 0 || !Number.isSafeInteger(d)) {
      throw headerError(
        `malformed header: 'shape' must hold non-negative integers, found ${describe(d)} on axis ${axis}`,
      );
    }
    return d;
  });
  return { descr: descr as NpyDescr, fortranOrder: fortran, shape };
}

function dtypeHint(descr: string): string {
  const m = /^([<>|=]?)([a-zA-Z])(\d*)$/.exec(descr);
  if (!m) return '';
  const [, order, kind, size] = m;
  if (kind === 'f' && (size === '4' || size === '8') && order !== '<' && order !== '>') {
    return ` (a float without an explicit byte order '<' or '>')`;
  }
  const names: Record<string, string> = {
    i: 'signed integers',
    u: 'unsigned integers',
    b: 'booleans or bytes',
    f: 'a float size Sightline does not read',
    c: 'complex numbers',
    O: 'Python objects, stored as a pickle',
    U: 'text',
    S: 'bytes',
    V: 'raw or structured records',
    M: 'dates',
    m: 'time deltas',
  };
  return names[kind] ? ` (${names[kind]})` : '';
}

function isDict(v: PyValue): v is PyDict {
  return typeof v === 'object' && v !== null && !Array.isArray(v) && 'dict' in v;
}
function isTuple(v: PyValue): v is PyTuple {
  return typeof v === 'object' && v !== null && !Array.isArray(v) && 'tuple' in v;
}

function describe(v: PyValue): string {
  if (v === null) return 'None';
  if (typeof v === 'boolean') return v ? 'True' : 'False';
  if (typeof v === 'number') return String(v);
  if (typeof v === 'string') return quoteInput(v, 40, "'");
  if (Array.isArray(v)) return 'a list';
  if (isTuple(v)) return 'a tuple';
  return 'a dict';
}

/** Recursive-descent parser for the Python literals a .npy header may hold. */
class LiteralParser {
  private pos = 0;
  /** containers open at pos */
  private depth = 0;
  constructor(private readonly text: string) {}

  parseTop(): PyValue {
    this.skipSpace();
    if (this.pos >= this.text.length) throw headerError('malformed header: the header is empty');
    const v = this.parseValue();
    this.skipSpace();
    if (this.pos < this.text.length) {
      throw this.fail(`unexpected text after the dict`);
    }
    return v;
  }

  private fail(what: string): InputError {
    if (this.pos >= this.text.length) {
      return headerError(`malformed header: ${what}, but the header ends there`);
    }
    const near = this.text
      .slice(this.pos, this.pos + 20)
      .replace(/\s+/g, ' ')
      .trim();
    return headerError(
      `malformed header: ${what} at character ${this.pos + 1}${near ? ` (near "${near}")` : ''}`,
    );
  }

  private skipSpace(): void {
    while (this.pos < this.text.length && /\s/.test(this.text[this.pos])) this.pos++;
  }

  private expect(ch: string): void {
    this.skipSpace();
    if (this.text[this.pos] !== ch) throw this.fail(`expected '${ch}'`);
    this.pos++;
  }

  private parseValue(): PyValue {
    this.skipSpace();
    const c = this.text[this.pos];
    if (c === undefined) throw this.fail('the header ends too early');
    if (c === '{' || c === '(' || c === '[') {
      if (this.depth >= MAX_LITERAL_DEPTH)
        throw this.fail(`more than ${MAX_LITERAL_DEPTH} nested brackets`);
      this.depth++;
      const v: PyValue =
        c === '{'
          ? this.parseDict()
          : c === '('
            ? { tuple: this.parseSequence('(', ')') }
            : this.parseSequence('[', ']');
      this.depth--;
      return v;
    }
    if (c === "'" || c === '"') return this.parseString();
    if (/[-+0-9.]/.test(c)) return this.parseNumber();
    const word = /^[A-Za-z_]\w*/.exec(this.text.slice(this.pos))?.[0];
    if (word === 'True' || word === 'False' || word === 'None') {
      this.pos += word.length;
      return word === 'None' ? null : word === 'True';
    }
    throw this.fail(
      word
        ? `unexpected name ${quoteInput(word, 20, "'")}`
        : `unexpected character ${quoteInput(c, 40, "'")}`,
    );
  }

  private parseDict(): PyDict {
    this.expect('{');
    const dict = new Map<string, PyValue>();
    for (;;) {
      this.skipSpace();
      if (this.text[this.pos] === '}') {
        this.pos++;
        return { dict };
      }
      const keyPos = this.pos;
      const key = this.parseValue();
      if (typeof key !== 'string') {
        this.pos = keyPos;
        throw this.fail('dict keys must be strings');
      }
      if (dict.has(key)) {
        this.pos = keyPos;
        throw this.fail(`key ${quoteInput(key, 20, "'")} appears twice`);
      }
      this.expect(':');
      dict.set(key, this.parseValue());
      this.skipSpace();
      if (this.text[this.pos] === ',') this.pos++;
      else if (this.text[this.pos] !== '}') throw this.fail(`expected ',' or '}'`);
    }
  }

  /** Tuples and lists: `()`, `(3,)`, `(2, 3)`, `[…]`; a trailing comma is allowed. */
  private parseSequence(open: string, close: string): PyValue[] {
    this.expect(open);
    const items: PyValue[] = [];
    for (;;) {
      this.skipSpace();
      if (this.text[this.pos] === close) {
        this.pos++;
        return items;
      }
      items.push(this.parseValue());
      this.skipSpace();
      if (this.text[this.pos] === ',') this.pos++;
      else if (this.text[this.pos] !== close) throw this.fail(`expected ',' or '${close}'`);
    }
  }

  private parseString(): string {
    const quote = this.text[this.pos++];
    let out = '';
    for (;;) {
      const c = this.text[this.pos++];
      if (c === undefined || c === '\n') {
        this.pos--;
        throw this.fail('unterminated string');
      }
      if (c === quote) return out;
      if (c !== '\\') {
        out += c;
        continue;
      }
      const e = this.text[this.pos++];
      const simple: Record<string, string> = {
        '\\': '\\',
        "'": "'",
        '"': '"',
        n: '\n',
        t: '\t',
        r: '\r',
        '0': '\0',
      };
      if (e in simple) out += simple[e];
      else if (e === 'x' || e === 'u') {
        const n = e === 'x' ? 2 : 4;
        const hex = this.text.slice(this.pos, this.pos + n);
        if (!new RegExp(`^[0-9a-fA-F]{${n}}$`).test(hex)) throw this.fail('bad escape in string');
        out += String.fromCharCode(parseInt(hex, 16));
        this.pos += n;
      } else {
        this.pos--;
        throw this.fail('bad escape in string');
      }
    }
  }

  /** Integers (a Python 2 `L` suffix is accepted) and decimals, so a bad shape can be named. */
  private parseNumber(): number {
    const m = /^[-+]?(?:\d+\.?\d*(?:[eE][-+]?\d+)?|\.\d+(?:[eE][-+]?\d+)?)[lL]?/.exec(
      this.text.slice(this.pos),
    );
    if (!m) throw this.fail('malformed number');
    this.pos += m[0].length;
    return Number(m[0].replace(/[lL]$/, ''));
  }
}
