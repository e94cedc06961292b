/// <reference types="vitest/config" />
import { defineConfig } from 'vite';
import react from '@vitejs/plugin-react';
import tailwindcss from '@tailwindcss/vite';

// One config for the web app (Vite root web/) and the test runner (Vitest, run from the top).
export default defineConfig({
  root: 'web',
  plugins: [react(), tailwindcss()],
  build: { outDir: '../dist/web', emptyOutDir: true },
  server: { proxy: { '/api': 'http://127.0.0.1:5180' } },
  test: {
    root: '.',
    include: ['tests/**/*.test.ts', 'tests/**/*.test.tsx'],
    testTimeout: 60_000,
    hookTimeout: 120_000,
    pool: 'forks',
    // two test files at a time: Vitest's default (CPUs − 1) is one on a two-core CI machine, and
    // most files wait on child processes, servers and the database rather than on their own CPU
    maxWorkers: 2,
    // the JSON report lets .ci/run print a plain "N passed, N failed" closing line
    reporters: ['default', 'json'],
    outputFile: { json: 'dist/test-results.json' },
  },
});
