#!/usr/bin/python3
"""Fallback peak-memory probe for `npm run bench` when /usr/bin/time is missing (see run.mjs).

Usage: /usr/bin/python3 tests/bench/maxrss.py SCRIPT.py [ARGS ...]

Runs SCRIPT.py as __main__ in this interpreter (runpy.run_path, sys.argv set as if it had been
started directly) and, at exit, writes the process's peak resident set
(resource.getrusage(RUSAGE_SELF).ru_maxrss, KiB on Linux) to the file named by
SIGHTLINE_BENCH_RSS_FILE.
"""

import atexit
import os
import resource
import runpy
import sys


def report():
    path = os.environ.get("SIGHTLINE_BENCH_RSS_FILE")
    if path:
        with open(path, "w") as fh:
            fh.write(f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}\n")


def main():
    if len(sys.argv) < 2:
        sys.exit(__doc__)
    atexit.register(report)
    script = sys.argv[1]
    sys.argv = sys.argv[1:]
    sys.path.insert(0, os.path.dirname(os.path.abspath(script)))
    runpy.run_path(script, run_name="__main__")


if __name__ == "__main__":
    main()
