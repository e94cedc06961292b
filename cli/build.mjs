// Bundle the CLI (and the server entry) with esbuild so a cold start reads one small module
// graph; heavy optional parts (progress spinner) stay in lazily loaded chunks.
import { build } from 'esbuild';
import { readFileSync, rmSync } from 'node:fs';

// start clean so chunks of earlier builds do not pile up
rmSync(new URL('../dist/cli', import.meta.url), { recursive: true, force: true });
rmSync(new URL('../dist/server', import.meta.url), { recursive: true, force: true });

const pkg = JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8'));
const common = {
  bundle: true,
  platform: 'node',
  target: 'node20',
  format: 'esm',
  sourcemap: true,
  logLevel: 'warning',
  // native addon: loaded from node_modules at run time
  external: ['@napi-rs/canvas'],
  define: { __SIGHTLINE_VERSION__: JSON.stringify(pkg.version) },
  banner: {
    js: "import { createRequire as __createRequire } from 'node:module'; const require = __createRequire(import.meta.url);",
  },
};
// The server's packages load their own files at run time (PGlite its WebAssembly and data,
// piscina and pino their worker scripts) or are large: they stay in node_modules.
const serverPackages = [
  '@electric-sql/pglite',
  'pg',
  'drizzle-orm',
  'better-auth',
  '@better-auth/*',
  'pino',
  'pino-http',
  'piscina',
  'nodemailer',
  'smtp-server',
  'multer',
  'helmet',
  'express',
  'express-rate-limit',
  'xmlbuilder2',
  'proper-lockfile',
  'pg-boss',
];
await build({
  ...common,
  external: [...common.external, ...serverPackages],
  entryPoints: { main: 'cli/main.ts' },
  outdir: 'dist/cli',
  splitting: true,
  chunkNames: 'chunks/[name]-[hash]',
});
await build({
  ...common,
  external: [...common.external, ...serverPackages],
  entryPoints: { main: 'server/main.ts' },
  outdir: 'dist/server',
});
// The analysis worker (server/jobs/pool.ts loads it beside the server bundle, or from here when
// the server runs from source): its own bundle, self-contained but for the native canvas addon;
// split so the plotting code the CLI modules reach lazily stays in a chunk the worker never loads.
await build({
  ...common,
  entryPoints: { 'analysis-worker': 'server/jobs/analysis-worker.ts' },
  outdir: 'dist/server',
  splitting: true,
  chunkNames: 'analysis-worker-chunks/[name]-[hash]',
});
// The batch worker (cli/run/batch.ts loads it from dist/cli/): its own bundle, like the analysis
// worker, so worker threads load plain JavaScript.
await build({
  ...common,
  entryPoints: { 'batch-worker': 'cli/run/batch-worker.ts' },
  outdir: 'dist/cli',
  splitting: true,
  chunkNames: 'batch-worker-chunks/[name]-[hash]',
});
