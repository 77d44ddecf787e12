// Every stage declares the spec section it comes from and whether its figures rest on the shared spectrum; the lists the
// empty-selector notes and the dropout flag's wording walk are derived from those declarations.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import type { ReductionSpec } from '../spec/reduction.js';
import { activeStages, SELECTED_SECTIONS, SPECTRAL_GROUPS, STAGES } from '../stages/index.js';
import type { ChannelContext, Stage } from '../stages/stage.js';
import { repo } from './helpers.js';

const schema = JSON.parse(readFileSync(join(repo, 'schemas', 'reduction.schema.json'), 'utf8'));
/** Options for sections the built-in default spec leaves off (none today): a new stage's section goes here if the default should not turn it on. */
const BEYOND_DEFAULT: Partial<ReductionSpec> = {};
/** The built-in default spec with those: every section on. */
const everySection: ReductionSpec = { ...parse(readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8')), ...BEYOND_DEFAULT };

/** Whether a schema (through its references, alternatives and list items) has an `only` property. */
function takesOnly(node: any): boolean {
  if (!node || typeof node !== 'object') return false;
  if (node.$ref) return takesOnly(node.$ref.split('/').slice(1).reduce((n: any, k: string) => n[k], schema));
  return node.properties?.only != null || [...(node.oneOf ?? []), ...(node.anyOf ?? []), ...(node.items ? [node.items] : [])].some(takesOnly);
}

/** A channel context that records the shared products a stage asks for (keys), and does nothing else. */
function recordingContext(quantity: string, unit: string): { ctx: ChannelContext; keys: string[] } {
  const keys: string[] = [], shared = new Map<string, Stage>(), recording = new Map<string, unknown>();
  const ctx: ChannelContext = {
    name: 'x', quantity, unit, sampleRate: 25600, range: null, bits: null, maxFrequencyHz: null, stepSize: null, fullScale: null,
    declared: true, declaredDurationS: null, timeSteps: () => null, flag() {}, evidence() {}, note() {}, addRow() {},
    shared: <T extends Stage>(key: string, make: () => T) => { if (!shared.has(key)) { keys.push(key); shared.set(key, make()); } return shared.get(key) as T; },
    recordingShared: <T>(key: string, make: () => T) => (recording.has(key) ? recording.get(key) : recording.set(key, make()).get(key)) as T,
    tachoChannels: [],
  };
  return { ctx, keys };
}

describe('the stage registry (stages/index.ts)', () => {
  it('the spec used here turns every section of the schema on, and every stage it turns on is in the registry, and the registry holds no other', () => {
    const sections = Object.keys(schema.properties).filter((k) => k !== 'quality' && k !== 'trends');
    expect(sections.filter((k) => !(k in everySection))).toEqual([]);
    const active = new Set(activeStages(everySection).map((s) => s.definition));
    expect([...active].filter((d) => !STAGES.includes(d)).map((d) => d.group)).toEqual([]);
    expect(STAGES.filter((d) => !active.has(d)).map((d) => d.group)).toEqual([]);
  });

  it('every stage declares its section (one of the schema\'s sections taking only:, or none) and whether it is spectral', () => {
    for (const d of STAGES) {
      expect(d, d.group).toHaveProperty('section');
      expect(typeof d.spectral, d.group).toBe('boolean');
      if (d.section !== null) expect(takesOnly(schema.properties[d.section]), `${d.group}: section ${d.section}`).toBe(true);
    }
    // A section's stages are the ones activeStages gives its selector (orders' tacho part excepted: it runs on the tacho).
    for (const s of activeStages(everySection)) {
      const written = (everySection as Record<string, any>)[s.definition.section ?? '']?.only;
      if (written && s.only && s.definition.section) expect(s.only, s.definition.group).toEqual(written);
    }
  });

  it('a stage declared spectral asks for the shared spectrum; a figure stage that asks for it is declared spectral', () => {
    const welch = 'welch:4096:0.5:hann';
    for (const s of activeStages(everySection)) {
      const reads = [recordingContext('acceleration', 'm/s^2'), recordingContext('sound_pressure', 'Pa')].some(({ ctx, keys }) => {
        s.definition.create(ctx, s.options);
        return keys.includes(welch);
      });
      // The quality flags read it to judge the recording (aliasing's top band, the pictures), which is no figure of a section.
      if (s.definition.group === 'quality') expect(s.definition.spectral, s.definition.group).toBe(false);
      else expect(reads, `${s.definition.group} reads the shared spectrum`).toBe(s.definition.spectral);
    }
  });

  it('derives the lists that were kept by hand beside it, unchanged', () => {
    expect(SELECTED_SECTIONS).toEqual(['statistics', 'spectrum', 'bands', 'octave_bands', 'velocity_bands', 'windows', 'time_weighting_s', 'mtvv', 'envelope', 'sound_level', 'rainflow', 'orders']);
    expect(new Set(SPECTRAL_GROUPS)).toEqual(new Set(['spectrum', 'bands', 'octave_bands', 'velocity_bands', 'orders', 'sound_level']));
  });
});
