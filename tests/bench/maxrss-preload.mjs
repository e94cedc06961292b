// Fallback peak-memory probe for `npm run bench` when /usr/bin/time is missing (see run.mjs):
// loaded with `node --import` into a Sightline or bare-node child, it writes the process's peak
// resident set (process.resourceUsage().maxRSS: getrusage's ru_maxrss, KiB on Linux; worker
// threads included, as they share the process) to the file named by SIGHTLINE_BENCH_RSS_FILE
// when the process exits.
import { writeFileSync } from 'node:fs';

const file = process.env.SIGHTLINE_BENCH_RSS_FILE;
if (file) {
  process.on('exit', () => {
    writeFileSync(file, `${process.resourceUsage().maxRSS}\n`);
  });
}
