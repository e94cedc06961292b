import { Command, Option } from 'commander';
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import {
  CONSTANT_NAMES,
  dispersionConstant,
  type ConstantName,
} from '../shared/physics/constants.js';
import type { InputFile, Software } from '../shared/schemas/common.js';
import { usageError } from './errors.js';

declare const __SIGHTLINE_VERSION__: string;

export const VERSION =
  typeof __SIGHTLINE_VERSION__ === 'string' ? __SIGHTLINE_VERSION__ : '0.0.0-dev';
export const SOFTWARE: Software = { name: 'sightline', version: VERSION };

export type Format = 'table' | 'json' | 'csv';

export interface CommonOptions {
  format?: Format;
  json?: boolean;
  out?: string;
  constant?: ConstantName;
  quiet?: boolean;
}

/** The options every command shares (interfaces.md "Global"). */
export function withCommon(cmd: Command, { constant = true } = {}): Command {
  cmd
    .addOption(new Option('--format <format>', 'output format').choices(['table', 'json', 'csv']))
    .option('--json', 'short for --format json')
    .option('--out <file>', 'write machine output to FILE atomically instead of stdout')
    .option('--quiet', 'no progress or notes on stderr');
  if (constant) {
    cmd.addOption(
      // no commander default, so a finished fit can tell an explicit choice from none
      new Option(
        '--constant <name>',
        'dispersion constant convention, recorded in the output (default: conventional)',
      ).choices(CONSTANT_NAMES),
    );
  }
  return cmd;
}

export function formatOf(o: CommonOptions, fallback: Format = 'table'): Format {
  return o.json ? 'json' : (o.format ?? fallback);
}

export const constantOf = (o: CommonOptions) => dispersionConstant(o.constant ?? 'conventional');

/** Parse a number option strictly; names the option in the error. */
export function numberOption(name: string, check?: (v: number) => string | undefined) {
  return (text: string): number => {
    const t = text.trim();
    const v = t === '' ? NaN : Number(t);
    if (!Number.isFinite(v)) throw usageError(`${name}: "${text}" is not a finite number`);
    const problem = check?.(v);
    if (problem) throw usageError(`${name}: ${text} ${problem}`);
    return v;
  };
}

export const positive = (v: number) => (v > 0 ? undefined : 'must be positive');
export const nonNegative = (v: number) => (v >= 0 ? undefined : 'must not be negative');

export function sha256File(path: string): string {
  return createHash('sha256').update(readFileSync(path)).digest('hex');
}

export function inputRecord(path: string, sha256: string, rows: number): InputFile {
  return { path, sha256, rows };
}

/** Progress goes to stderr, and only when stderr is a terminal. */
export async function withProgress<T>(
  o: CommonOptions,
  text: string,
  work: () => Promise<T>,
): Promise<T> {
  if (o.quiet || !process.stderr.isTTY) return work();
  const { default: ora } = await import('ora');
  const spinner = ora({ text, stream: process.stderr }).start();
  try {
    const r = await work();
    spinner.stop();
    return r;
  } catch (e) {
    spinner.stop();
    throw e;
  }
}

/** Notes for people (stderr), silenced by --quiet. */
export function note(o: CommonOptions, text: string): void {
  if (!o.quiet) process.stderr.write(`${text}\n`);
}

export const CAUTION =
  "Corrections change published timing results: check the constant convention, the model, fit quality and warnings, and compare with your group's reference pulsars before release.";
