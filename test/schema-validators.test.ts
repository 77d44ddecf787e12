// The committed schema validators are what ajv generates from the schemas now, and judge documents as ajv's own compiled validators do.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { Ajv } from 'ajv';
import { describe, expect, it } from 'vitest';
import { archive, reduction } from '../pipeline/declare/schema-validators.js';
import { packageRoot } from '../pipeline/declare/package-files.js';
import { parse } from 'yaml';
import { AJV_OPTIONS, SCHEMAS, target, validatorsText } from '../scripts/build-validators.js';

const schema = (file: string) => JSON.parse(readFileSync(join(packageRoot, 'schemas', file), 'utf8'));

describe('generated schema validators', () => {
  it('are what scripts/build-validators.ts makes from the schemas now (npm run build:validators after a schema changes)', () => {
    expect(readFileSync(target, 'utf8')).toBe(validatorsText());
  });

  it('give the errors of validators ajv compiles at run time (ajv 8, allErrors), on good and bad documents', () => {
    const cases = {
      archive: [
        readFileSync(join(packageRoot, 'sample-archive', 'archive.yaml'), 'utf8'),
        'groups:\n  - name: g\n    match: "*.wav"\n    format: mp3\n    channels:\n      - { name: a, range: [5], sensitivity: 3 }\n',
        'groups: []\nextra: 1\n',
        'groups:\n  - match: 7\n',
      ],
      reduction: [
        readFileSync(join(packageRoot, 'schemas', 'reduction.default.yaml'), 'utf8'),
        'statistics: { bogus: 1 }\nwindows: { length_s: -1 }\n',
        'trends: { features: 3 }\n',
        'envelope: { band_hz: [10] }\nquality: { saturation: { fraction: "x" } }\n',
      ],
    };
    const generated = { archive, reduction } as Record<string, ((d: unknown) => boolean) & { errors?: unknown }>;
    for (const [name, docs] of Object.entries(cases)) {
      const compiled = new Ajv({ ...AJV_OPTIONS }).compile(schema(SCHEMAS[name as keyof typeof SCHEMAS]));
      for (const text of docs) {
        const doc = parse(text) ?? {};
        expect(generated[name](doc), text).toBe(compiled(doc));
        expect(generated[name].errors ?? null, text).toEqual(compiled.errors ?? null);
      }
    }
  });
});
