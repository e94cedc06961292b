import { spawnSync } from 'node:child_process';

/**
 * Reference checks run Debian's python3 with numpy, scipy and astropy (installed by .ci/run).
 * In CI a missing module fails the test; on a developer machine without them the reference
 * suites are skipped and say so.
 */
export const PYTHON = '/usr/bin/python3';

function probe(): { ok: boolean; why: string } {
  const r = spawnSync(
    PYTHON,
    [
      '-c',
      'import numpy, scipy, astropy; print(numpy.__version__, scipy.__version__, astropy.__version__)',
    ],
    {
      encoding: 'utf8',
    },
  );
  if (r.status === 0) return { ok: true, why: r.stdout.trim() };
  return {
    ok: false,
    why: (r.stderr || String(r.error)).trim().split('\n').pop() ?? 'python3 not found',
  };
}

const status = probe();
export const pythonAvailable = status.ok;

if (!status.ok) {
  if (process.env.CI) {
    throw new Error(
      `reference libraries missing in CI (${status.why}); .ci/run must install python3-numpy, python3-scipy and python3-astropy`,
    );
  }
  console.warn(`[reference] skipping checks against numpy/scipy/astropy: ${status.why}`);
}

/** Run a Python script that reads JSON on stdin and prints JSON on stdout. */
export function python<T = unknown>(script: string, input: unknown = null): T {
  const r = spawnSync(PYTHON, ['-c', script], {
    input: JSON.stringify(input),
    encoding: 'utf8',
    maxBuffer: 256 * 1024 * 1024,
    env: { ...process.env, PYTHONWARNINGS: 'ignore' },
  });
  if (r.status !== 0) throw new Error(`python failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as T;
}
