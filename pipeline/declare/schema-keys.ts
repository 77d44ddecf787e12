// The keys a JSON Schema allows at a place in a document, so that an unknown key can be answered with the one meant.

type Schema = { [key: string]: unknown };

const isSchema = (v: unknown): v is Schema => v != null && typeof v === 'object' && !Array.isArray(v);

/** "#/definitions/channel" within the schema; other references are not followed. */
function resolveRef(root: Schema, s: Schema): Schema {
  for (let seen = 0; typeof s.$ref === 'string' && s.$ref.startsWith('#/') && seen < 32; seen++) {
    const target = s.$ref.slice(2).split('/').reduce<unknown>((node, part) => (isSchema(node) ? node[part.replace(/~1/g, '/').replace(/~0/g, '~')] : undefined), root);
    if (!isSchema(target)) break;
    s = target;
  }
  return s;
}

/** The schema and every branch it may take (oneOf, anyOf, allOf, if/then/else), references followed. */
function branches(root: Schema, s: Schema, depth = 0): Schema[] {
  const here = resolveRef(root, s);
  if (depth > 8) return [here];
  const subs = ['oneOf', 'anyOf', 'allOf'].flatMap((k) => (Array.isArray(here[k]) ? (here[k] as unknown[]).filter(isSchema) : []));
  for (const k of ['then', 'else']) if (isSchema(here[k])) subs.push(here[k] as Schema);
  return [here, ...subs.flatMap((b) => branches(root, b, depth + 1))];
}

/** The schemas that may describe the value at `path` (keys and list indices). */
function schemasAt(root: Schema, path: readonly (string | number)[]): Schema[] {
  let current = branches(root, root);
  for (const step of path) {
    const next: Schema[] = [];
    for (const s of current) {
      if (typeof step === 'number') {
        if (isSchema(s.items)) next.push(s.items);
      } else if (isSchema(s.properties) && isSchema(s.properties[step])) next.push(s.properties[step] as Schema);
      else if (isSchema(s.additionalProperties)) next.push(s.additionalProperties);
    }
    current = next.flatMap((s) => branches(root, s));
  }
  return current;
}

/** The keys the schema names for the object at `path`, in the schema's order; none where it says nothing. */
export function keysAllowedAt(root: object, path: readonly (string | number)[]): string[] {
  const keys = schemasAt(root as Schema, path).flatMap((s) => (isSchema(s.properties) ? Object.keys(s.properties) : []));
  return [...new Set(keys)];
}
