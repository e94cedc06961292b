// Reading a batch manifest (YAML or JSON) into a checked BatchManifest; every failure is a
// usage error (exit 2) naming the file and, where known, the line or the field, on one short line.
import { readFileSync } from 'node:fs';
import { parse as parseYaml, YAMLParseError } from 'yaml';
import { oneLine } from '../../shared/formats/errors.js';
import { jsonSyntaxProblem, lineAndCharacter } from '../../shared/formats/json.js';
import { batchManifestSchema, type BatchManifest } from '../../shared/schemas/batch.js';
import { usageError } from '../errors.js';

/**
 * Limits that keep a hostile manifest from exhausting the YAML parser, each named in its message:
 * alias expansions (the yaml package's guard against "billion laughs" documents, its default
 * value), and nesting. The yaml package recurses per level and overflows the stack near a
 * thousand levels (after which V8 was seen to abort the process in a later parse), so nesting is
 * checked on the text first; a manifest needs four or five levels.
 */
export const MANIFEST_MAX_ALIASES = 100;
export const MANIFEST_MAX_DEPTH = 64;

/** Characters of each zod issue, and issues, a message quotes. */
const ISSUE_CHARS = 120;
const ISSUES_SHOWN = 3;

/** zod's path as a JSON path: jobs[2].options.gap (long keys shortened) */
function jsonPath(p: readonly PropertyKey[]): string {
  const path =
    p.reduce<string>(
      (s, k) =>
        typeof k === 'number'
          ? `${s}[${k}]`
          : s
            ? `${s}.${oneLine(String(k).slice(0, 40))}`
            : oneLine(String(k).slice(0, 40)),
      '',
    ) || '(top)';
  return path.length > 80 ? `${path.slice(0, 80)}…` : path;
}

/**
 * Nesting deeper than MANIFEST_MAX_DEPTH in YAML text: flow collections ([ { ) counted outside
 * quotes and comments, and block nesting by a line's indentation (spaces and "- " indicators).
 */
function yamlNesting(text: string): { line: number; depth: number } | undefined {
  let line = 1;
  let depth = 0;
  let atLineStart = true;
  let indent = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (c === '\n') {
      line++;
      atLineStart = true;
      indent = 0;
      continue;
    }
    if (atLineStart) {
      if (c === ' ' || c === '-' || c === '?' || c === '\t') {
        indent++;
        if (indent > 2 * MANIFEST_MAX_DEPTH) return { line, depth: Math.ceil(indent / 2) };
        continue;
      }
      atLineStart = false;
    }
    if (c === '#' && (i === 0 || /\s/.test(text[i - 1]))) {
      while (i + 1 < text.length && text[i + 1] !== '\n') i++;
    } else if ((c === '"' || c === "'") && (i === 0 || /[\s[{,:]/.test(text[i - 1]))) {
      // a quoted scalar (a quote inside a plain scalar, as in it's, starts none): skip to its closing quote ("\"" escapes; '' is a quote inside '…')
      for (i++; i < text.length; i++) {
        if (text[i] === '\n') line++;
        if (c === '"' && text[i] === '\\') i++;
        else if (text[i] === c) {
          if (c === "'" && text[i + 1] === "'") i++;
          else break;
        }
      }
    } else if (c === '[' || c === '{') {
      if (++depth > MANIFEST_MAX_DEPTH) return { line, depth };
    } else if ((c === ']' || c === '}') && depth > 0) depth--;
  }
  return undefined;
}

function parseYamlText(file: string, text: string): unknown {
  const deep = yamlNesting(text);
  if (deep) {
    throw usageError(
      `${file}:${deep.line}: the manifest nests more than ${MANIFEST_MAX_DEPTH} levels deep; a manifest needs a handful`,
    );
  }
  try {
    // warnings (an unknown tag) are not printed: what they concern fails the schema check below
    return parseYaml(text, { maxAliasCount: MANIFEST_MAX_ALIASES, logLevel: 'error' });
  } catch (e) {
    if (e instanceof YAMLParseError) {
      const at = e.linePos?.[0];
      throw usageError(
        `${file}${at ? `:${at.line}:${at.col}` : ''}: not valid YAML (${quoteReason(e.message.split('\n')[0])})`,
      );
    }
    if (e instanceof ReferenceError && /alias/i.test(e.message)) {
      throw usageError(
        `${file}: the manifest expands aliases (*name) more than ${MANIFEST_MAX_ALIASES} times; write the options out, or use fewer aliases`,
      );
    }
    // anything else the parser throws (a stack overflow, an internal check) is still bad input
    throw usageError(`${file}: not valid YAML (${quoteReason((e as Error).message ?? String(e))})`);
  }
}

function quoteReason(reason: string): string {
  const r = oneLine(reason);
  return r.length > 160 ? `${r.slice(0, 160)}…` : r;
}

function parseJsonText(file: string, text: string): unknown {
  try {
    return JSON.parse(text);
  } catch {
    const problem = jsonSyntaxProblem(text);
    if (!problem) throw usageError(`${file}: not valid JSON`);
    const { line, char } = lineAndCharacter(text, problem.offset);
    throw usageError(`${file}:${line}:${char}: not valid JSON (${problem.reason})`);
  }
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
  text = text.replace(/^\uFEFF/, '');
  const raw = /\.ya?ml$/i.test(file) ? parseYamlText(file, text) : parseJsonText(file, text);
  const parsed = batchManifestSchema.safeParse(raw);
  if (!parsed.success) {
    const issues = parsed.error.issues;
    const first = issues.slice(0, ISSUES_SHOWN).map((i) => {
      const message = oneLine(i.message);
      const shown =
        message.length > ISSUE_CHARS
          ? `${message.slice(0, ISSUE_CHARS)}… (${message.length} characters)`
          : message;
      return `${jsonPath(i.path)}: ${shown}`;
    });
    throw usageError(
      `${file}: invalid manifest: ${first.join('; ')}${issues.length > ISSUES_SHOWN ? ` (+${issues.length - ISSUES_SHOWN} more)` : ''}`,
    );
  }
  return parsed.data;
}
