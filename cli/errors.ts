import { InputError } from '../shared/formats/errors.js';

/** Exit codes (interfaces.md): 0 ok · 1 a check failed · 2 usage or invalid input · 3 I/O failure. */
export const EXIT = { ok: 0, checkFailed: 1, usage: 2, io: 3 } as const;

export class CliError extends Error {
  constructor(
    message: string,
    readonly exitCode: number,
  ) {
    super(message);
  }
}

export const usageError = (message: string) => new CliError(message, EXIT.usage);
export const checkFailed = (message: string) => new CliError(message, EXIT.checkFailed);
export const ioFailure = (message: string) => new CliError(message, EXIT.io);

/** Map anything thrown to an exit code and one line for stderr. */
export function classify(e: unknown): { code: number; message: string } {
  if (e instanceof CliError) return { code: e.exitCode, message: e.message };
  if (e instanceof InputError) return { code: EXIT.usage, message: e.message };
  const err = e as NodeJS.ErrnoException;
  if (err && typeof err.code === 'string' && err.syscall) {
    const what = err.path ? `${err.path}: ` : '';
    const reason =
      err.code === 'ENOENT'
        ? 'no such file or directory'
        : err.code === 'EACCES'
          ? 'permission denied'
          : err.message;
    return { code: EXIT.io, message: `${what}${reason}` };
  }
  if (e instanceof RangeError) return { code: EXIT.usage, message: e.message };
  return { code: EXIT.checkFailed, message: `internal error: ${err?.stack ?? String(e)}` };
}
