// Preload for child processes whose memory a test measures: `node --import THIS_FILE ...` with
// SIGHTLINE_PEAK_RSS_FILE set writes the process's peak resident set size (bytes) to that file
// when the process exits. process.resourceUsage().maxRSS is the kernel's ru_maxrss (getrusage),
// in KiB: the high-water mark of the whole process (V8 heap, typed arrays, buffers, code), not a
// sample, so a short peak between two polls cannot be missed.
import { writeFileSync } from 'node:fs';

const target = process.env.SIGHTLINE_PEAK_RSS_FILE;
if (target) {
  process.on('exit', () => {
    writeFileSync(target, String(process.resourceUsage().maxRSS * 1024));
  });
}
