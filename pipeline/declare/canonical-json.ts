// Stable JSON for hashing declarations and results, in a module of its own so that worker threads need no YAML or schema code.

/** Stable JSON: keys sorted, so the hash depends on content, not on layout or key order. */
export function canonicalJson(value: unknown): string {
  if (Array.isArray(value)) return `[${value.map(canonicalJson).join(',')}]`;
  if (value && typeof value === 'object') return `{${Object.keys(value).sort().map((k) => `${JSON.stringify(k)}:${canonicalJson((value as Record<string, unknown>)[k])}`).join(',')}}`;
  return JSON.stringify(value);
}
