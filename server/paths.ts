// Where the package's own files are, whether this code runs from source (server/…), from the
// server bundle (dist/server/) or from a CLI chunk (dist/cli/chunks/): the nearest folder above
// holding Sightline's package.json.
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

let cached: string | undefined;

export function packageRoot(): string {
  if (cached) return cached;
  let dir = path.dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    const file = path.join(dir, 'package.json');
    if (existsSync(file)) {
      try {
        if ((JSON.parse(readFileSync(file, 'utf8')) as { name?: string }).name === 'sightline')
          return (cached = dir);
      } catch {
        // not ours; keep looking
      }
    }
    dir = path.dirname(dir);
  }
  throw new Error(
    'cannot find the Sightline package folder above ' + fileURLToPath(import.meta.url),
  );
}

export const distDir = (...parts: string[]) => path.join(packageRoot(), 'dist', ...parts);
