// Preloaded into the review server by tests/load/run.mjs (`node --import <this> main.js`): watches
// the main thread's event-loop delay with perf_hooks.monitorEventLoopDelay, so the load test can
// tell "the main thread was busy or blocked" from "requests waited elsewhere" (database, CPU
// shared with other processes). On SIGUSR2 it writes what it saw since the previous SIGUSR2 (or
// since start) to the JSON file named by SIGHTLINE_LOAD_LOOP_FILE and starts counting afresh.
// The server's own code is unchanged; worker threads (which inherit the preload) do nothing.
import { renameSync, writeFileSync } from 'node:fs';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { isMainThread } from 'node:worker_threads';

const file = process.env.SIGHTLINE_LOAD_LOOP_FILE;
if (isMainThread && file) {
  // a 10 ms timer: the histogram holds the time between its ticks (ns), so 10 ms is a free loop
  // and anything above is time the main thread could not get to its timers
  const histogram = monitorEventLoopDelay({ resolution: 10 });
  histogram.enable();
  let since = Date.now();
  process.on('SIGUSR2', () => {
    const ms = (ns) => Math.round(ns / 1e4) / 100;
    const now = Date.now();
    const out = {
      from: new Date(since).toISOString(),
      to: new Date(now).toISOString(),
      samples: histogram.count,
      p50_ms: ms(histogram.percentile(50)),
      p99_ms: ms(histogram.percentile(99)),
      max_ms: ms(histogram.max),
      mean_ms: ms(histogram.mean),
    };
    writeFileSync(`${file}.tmp`, JSON.stringify(out) + '\n');
    renameSync(`${file}.tmp`, file);
    histogram.reset();
    since = now;
  });
}
