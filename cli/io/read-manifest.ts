// Reading a batch manifest (YAML or JSON) into a checked BatchManifest; every failure is a
// usage error naming the file and, where known, the line or the field.
import { readFileSync } from 'node:fs';
import { parse as parseYaml, YAMLParseError } from 'yaml';
import { batchManifestSchema, type BatchManifest } from '../../shared/schemas/batch.js';
import { usageError } from '../errors.js';

/** zod's path as a JSON path: jobs[2].options.gap */
function jsonPath(p: readonly PropertyKey[]): string {
  return (
    p.reduce<string>(
      (s, k) => (typeof k === 'number' ? `${s}[${k}]` : s ? `${s}.${String(k)}` : String(k)),
      '',
    ) || '(top)'
  );
}

export function readManifest(file: string): BatchManifest {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (e) {
    throw e instanceof Error && (e as NodeJS.ErrnoException).code === 'ENOENT'
      ? usageError(`${file}: no such manifest`)
      : e;
  }
  let raw: unknown;
  if (/\.ya?ml$/i.test(file)) {
    try {
      raw = parseYaml(text);
    } catch (e) {
      if (e instanceof YAMLParseError) {
        const at = e.linePos?.[0];
        throw usageError(
          `${file}${at ? `:${at.line}:${at.col}` : ''}: not valid YAML (${e.message.split('\n')[0]})`,
        );
      }
      throw e;
    }
  } else {
    try {
      raw = JSON.parse(text);
    } catch (e) {
      throw usageError(`${file}: not valid JSON (${(e as Error).message})`);
    }
  }
  const parsed = batchManifestSchema.safeParse(raw);
  if (!parsed.success) {
    const issues = parsed.error.issues;
    const first = issues.slice(0, 3).map((i) => `${jsonPath(i.path)}: ${i.message}`);
    throw usageError(
      `${file}: invalid manifest: ${first.join('; ')}${issues.length > 3 ? ` (+${issues.length - 3} more)` : ''}`,
    );
  }
  return parsed.data;
}
