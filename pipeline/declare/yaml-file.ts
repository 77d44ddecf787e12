// Loads a YAML file validated against a JSON Schema; every error names the file, the line and the key path.
import { readFile } from 'node:fs/promises';
import type { ErrorObject } from 'ajv';
import { isMap, isPair, isScalar, LineCounter, parseDocument, visit, type Document } from 'yaml';
import { didYouMean, likelyMeant } from './nearest-names.js';
import { readSchema } from './package-files.js';
import { keysAllowedAt } from './schema-keys.js';
import { retiredBelow, retiredKey } from './retired-keys.js';
import { archive, reduction } from './schema-validators.js';
import { syntaxHint } from './yaml-syntax-hint.js';

/** Input that makes the whole run impossible (exit code 2). */
export class UsageError extends Error {
  override name = 'UsageError';
}

/** `at`: the key path as keys and list indices, so that a problem can be told to lie inside one group. */
export interface Problem { file: string; line: number; path: string; message: string; at: (string | number)[] }

export const formatProblems = (problems: Problem[]) => problems.map((p) => `${p.file}:${p.line}: ${p.path || '(top)'}: ${p.message}`).join('\n');

/** "groups[0].channels[2].range" from ["groups", 0, "channels", 2, "range"]. */
export const keyPath = (path: (string | number)[]) => path.map((k, i) => (typeof k === 'number' ? `[${k}]` : (i ? '.' : '') + k)).join('');

export class YamlSource {
  constructor(readonly file: string, readonly doc: Document, private readonly lines: LineCounter) {}

  /** 1-based line of the node at path, or of its nearest existing parent. */
  lineOf(path: (string | number)[], key = false): number {
    for (let p = path; ; p = p.slice(0, -1)) {
      let node: unknown = p.length ? this.doc.getIn(p, true) : this.doc.contents;
      if (key && p === path && p.length) {
        const parent = this.doc.getIn(p.slice(0, -1), true);
        if (isMap(parent)) node = parent.items.find((it) => isPair(it) && isScalar(it.key) && it.key.value === p[p.length - 1])?.key ?? node;
      }
      const range = (node as { range?: [number, number, number] } | undefined)?.range;
      if (range) return this.lines.linePos(range[0]).line;
      if (!p.length) return 1;
    }
  }

  problem(path: (string | number)[], message: string, key = false): Problem {
    return { file: this.file, line: this.lineOf(path, key), path: keyPath(path), message, at: path };
  }
}

/** Keys listed in full when none is near the unknown one; more would bury the line. */
const KEYS_LISTED = 16;

/** What to write instead of an unknown key: the allowed key it is nearest to, else the keys allowed there. */
function unknownKey(key: string, allowed: readonly string[]): string {
  const meant = likelyMeant(key, allowed);
  if (meant.length) return `unknown key "${key}"; ${didYouMean(meant)}`;
  if (allowed.length && allowed.length <= KEYS_LISTED) return `unknown key "${key}"; the keys allowed here are ${allowed.join(', ')}`;
  return `unknown key "${key}"; check its spelling against the schema`;
}

function describeAjv(e: ErrorObject, schema: object | null): { path: (string | number)[]; message: string; key: boolean } {
  const path = e.instancePath.split('/').slice(1).map((s) => (/^\d+$/.test(s) ? Number(s) : s.replace(/~1/g, '/').replace(/~0/g, '~')));
  switch (e.keyword) {
    case 'additionalProperties': {
      const at = [...path, e.params.additionalProperty];
      // A retired key written one level up is still answered with what replaced it, beside the keys allowed where it stands.
      const below = retiredBelow(at);
      return { path: at, key: true, message: retiredKey(at) ?? `${unknownKey(e.params.additionalProperty, schema ? keysAllowedAt(schema, path) : [])}${below ? `; ${below}` : ''}` };
    }
    case 'required':
      return { path, key: false, message: `missing required key "${e.params.missingProperty}"` };
    case 'enum':
      return { path, key: false, message: `must be one of ${e.params.allowedValues.map((v: unknown) => JSON.stringify(v)).join(', ')}` };
    default:
      return { path, key: false, message: e.message ?? 'invalid value' };
  }
}

/** Paths of the numbers that are not finite: YAML reads .inf, .nan and 1e400 as numbers, which JSON Schema's "number" accepts. */
export function nonFinitePaths(value: unknown, path: (string | number)[] = []): (string | number)[][] {
  if (typeof value === 'number') return Number.isFinite(value) ? [] : [path];
  if (Array.isArray(value)) return value.flatMap((v, i) => nonFinitePaths(v, [...path, i]));
  if (value && typeof value === 'object') return Object.entries(value).flatMap(([k, v]) => nonFinitePaths(v, [...path, k]));
  return [];
}

/** The schemas' validators, generated ahead of time (scripts/build-validators.ts), so no run compiles a schema. */
type Validator = ((data: unknown) => boolean) & { errors?: ErrorObject[] | null };
const VALIDATORS: Record<string, Validator> = { 'archive.schema.json': archive, 'reduction.schema.json': reduction };

/** Parses and validates; throws UsageError listing every problem. */
export async function loadYaml(file: string, schemaName: string, displayName = file): Promise<{ value: unknown; source: YamlSource }> {
  return parseYaml(await yamlText(file, displayName), schemaName, displayName);
}

/** A declaration file's text; one that cannot be read is unusable input. */
export async function yamlText(file: string, displayName = file): Promise<string> {
  try {
    return await readFile(file, 'utf8');
  } catch (e) {
    throw new UsageError(`${displayName}: cannot be read (${(e as NodeJS.ErrnoException).code ?? e}); check the path`);
  }
}

export async function parseYaml(text: string, schemaName: string, displayName: string): Promise<{ value: unknown; source: YamlSource }> {
  const { value, source, infinite, invalid } = await parseYamlProblems(text, schemaName, displayName);
  const problems = schemaProblems(infinite, invalid);
  if (problems.length) throw new UsageError(formatProblems(problems));
  return { value, source };
}

/** Every problem at once, in the file's order; where a number is not finite the schema, which takes it for a number, says nothing more. */
export function schemaProblems(infinite: Problem[], invalid: Problem[]): Problem[] {
  return [...infinite, ...invalid.filter((p) => !infinite.some((q) => q.path === p.path))].sort((a, b) => a.line - b.line);
}

/**
 * Parses and validates, throwing UsageError on a YAML syntax error only: the numbers that are not finite and the schema's
 * problems are returned, each with its key path, for a caller that can set aside the part of the document they lie in.
 */
export async function parseYamlProblems(text: string, schemaName: string, displayName: string): Promise<{ value: unknown; source: YamlSource; infinite: Problem[]; invalid: Problem[] }> {
  const lines = new LineCounter();
  const doc = parseDocument(text, { lineCounter: lines, prettyErrors: false });
  if (doc.errors.length) {
    // Without pretty errors the parser gives each error's offset only; the line counter turns it into a line.
    throw new UsageError(doc.errors.map((e) => `${displayName}:${e.linePos?.[0].line ?? lines.linePos(e.pos[0]).line}: YAML syntax: ${e.message.split('\n')[0]}; ${syntaxHint(e.code, e.message)}`).join('\n'));
  }
  // An unquoted value starting with * (a glob: *.wav) is a YAML alias to an anchor the file never names.
  const unresolved: string[] = [];
  visit(doc, { Alias(_, node) { if (!node.resolve(doc)) unresolved.push(`${displayName}:${lines.linePos(node.range?.[0] ?? 0).line}: YAML syntax: *${node.source} reads as a reference to an anchor named ${node.source}, which the file does not define; put a value that starts with * in quotes ("*${node.source}")`); } });
  if (unresolved.length) throw new UsageError(unresolved.join('\n'));
  const value = doc.toJS() ?? {};
  const source = new YamlSource(displayName, doc, lines);
  const infinite = nonFinitePaths(value).map((p) => source.problem(p, 'must be a finite number (.inf, .nan and values beyond 1.8e308 are not); write the value itself'));
  const validate = VALIDATORS[schemaName];
  if (!validate) throw new Error(`quern: no validator for ${schemaName}; add it to scripts/build-validators.ts`);
  if (validate(value)) return { value, source, infinite, invalid: [] };
  // oneOf/anyOf repeat their branches' errors; the branch errors are the useful ones.
  const errors = (validate.errors ?? []).filter((e) => e.keyword !== 'oneOf' && e.keyword !== 'anyOf');
  // The schema itself is read only to answer an unknown key with the keys allowed in its place.
  const schema = errors.some((e) => e.keyword === 'additionalProperties') ? await readSchema(schemaName).catch(() => null) : null;
  const seen = new Set<string>();
  const invalid = errors.map((e) => describeAjv(e, schema)).map((d) => source.problem(d.path, d.message, d.key)).filter((p) => {
    const k = `${p.line}|${p.path}|${p.message}`;
    return seen.has(k) ? false : (seen.add(k), true);
  });
  return { value, source, infinite, invalid };
}
