// The version is injected at bundle time by cli/build.mjs (esbuild `define`); source runs fall back.
declare const __SIGHTLINE_VERSION__: string;

export const SOFTWARE = {
  name: 'sightline',
  version: typeof __SIGHTLINE_VERSION__ === 'string' ? __SIGHTLINE_VERSION__ : '0.0.0-dev',
} as const;
