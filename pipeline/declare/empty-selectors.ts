// The spec's `only:` selectors and watched trend features held against the channels archive.yaml declares, so that a
// typo which leaves a section (or a trend) without a channel is named by check and by the run, not found weeks later empty.
import picomatch from 'picomatch';
import { activeStages, SELECTED_SECTIONS } from '../../stages/index.js';
import type { ArchiveDeclaration } from '../../spec/archive.js';
import type { ChannelSelector, ReductionSpec } from '../../spec/reduction.js';
import type { TrendOptions } from '../trends/options.js';
import { didYouMean, likelyMeant } from './nearest-names.js';

/** The channels the usable groups declare; `namesKnown` is false when some group leaves its channels' names to its files. */
export interface ArchiveChannels { names: string[]; quantities: string[]; namesKnown: boolean }

/** Quantities quern's own figures select by (defaults of velocity, sound levels, rainflow), known whatever the archive holds. */
const QUANTITIES_QUERN_USES = ['acceleration', 'sound_pressure', 'strain', 'stress'];

/** What the archive's usable groups declare: channel names and quantities (an undeclared channel's quantity is "unknown"). */
export function archiveChannels(declaration: ArchiveDeclaration): ArchiveChannels {
  const usable = declaration.groups.filter((g) => !g.broken);
  const declared = usable.flatMap((g) => g.channels ?? []);
  const quantities = [...new Set([...declared.map((c) => c.quantity), ...(usable.some((g) => !g.channels) ? ['unknown'] : [])])];
  return { names: [...new Set(declared.map((c) => c.name))], quantities, namesKnown: usable.every((g) => g.channels != null) };
}

/** The selectors a section's value carries as written, each with its place: a list of sets (octave_bands) one a set. */
function writtenSelectors(section: string, value: unknown): { place: string; only: ChannelSelector }[] {
  const onlyOf = (v: unknown) => (v && typeof v === 'object' && !Array.isArray(v) ? (v as { only?: ChannelSelector }).only : undefined);
  const places = Array.isArray(value) ? value.map((v, i) => ({ place: `${section}[${i}]`, only: onlyOf(v) })) : [{ place: section, only: onlyOf(value) }];
  return places.filter((p): p is { place: string; only: ChannelSelector } => p.only != null);
}

/**
 * A selector of quern's standard quantities alone (the default spec's own), which an archive without such sensors leaves
 * empty by design: not a typo, so not noted (a declared quantity a slip away from one is noted on archive.yaml's side).
 */
const standardOnly = (only: ChannelSelector | undefined) => only != null && !only.names?.length && (only.quantities ?? []).every((q) => QUANTITIES_QUERN_USES.includes(q));

/** Whether `only` may select a channel of the archive: certainly none only when every entry is known to select none. */
export function selectsSome(only: ChannelSelector | undefined, a: ArchiveChannels): boolean {
  if (!only) return a.quantities.length > 0;
  const names = only.names ?? [];
  if (names.length && !a.namesKnown) return true;
  return names.some((p) => a.names.some((n) => picomatch.isMatch(n, p))) || (only.quantities ?? []).some((q) => a.quantities.includes(q));
}

/** The entries of a selector that select no channel, each with the name it is likely a slip for ('' when none is near). */
function deadEntries(only: ChannelSelector, a: ArchiveChannels): { key: 'names' | 'quantities'; entry: string; meant: string }[] {
  const names = a.namesKnown ? (only.names ?? []).filter((p) => !a.names.some((n) => picomatch.isMatch(n, p))) : [];
  const quantities = (only.quantities ?? []).filter((q) => !a.quantities.includes(q));
  const knownQuantities = [...new Set([...a.quantities, ...QUANTITIES_QUERN_USES])];
  return [
    ...quantities.map((entry) => ({ key: 'quantities' as const, entry, meant: didYouMean(likelyMeant(entry, knownQuantities, 1)) })),
    ...names.map((entry) => ({ key: 'names' as const, entry, meant: didYouMean(likelyMeant(entry, a.names, 1)) })),
  ];
}

/** A selector as a key of the notes' grouping. */
const selectorKey = (only: ChannelSelector | undefined) => JSON.stringify(only ?? null);

/** What the archive offers a selector, for a note. */
const offered = (a: ArchiveChannels) =>
  `archive.yaml's channels have quantities ${a.quantities.join(', ') || '(none)'}${a.namesKnown ? ` and names ${a.names.join(', ') || '(none)'}` : ''}`;

/**
 * Notes on the spec's written `only:` selectors: a section whose selector selects no channel of the archive (its figures
 * would stay empty on every recording), and an entry that selects none though its section selects others, when it lies a
 * slip away from a quantity or channel name (`specFile` names the spec as the notes say it).
 */
export function selectorNotes(spec: ReductionSpec, a: ArchiveChannels, specFile = 'reduction.yaml'): string[] {
  const notes: string[] = [];
  for (const { place, only } of SELECTED_SECTIONS.flatMap((section) => writtenSelectors(section, spec[section]))) {
    if (standardOnly(only)) continue;
    const dead = deadEntries(only, a);
    const said = (d: (typeof dead)[number]) => `${d.key} "${d.entry}"${d.meant ? ` (${d.meant})` : ''}`;
    if (!selectsSome(only, a)) {
      notes.push(`${specFile} ${place}.only selects no channel of the archive (${dead.map(said).join(', ') || 'no entry'}), so its figures stay empty on every recording; ${offered(a)}`);
    } else {
      for (const d of dead.filter((x) => x.meant)) notes.push(`${specFile} ${place}.only ${d.key} "${d.entry}" selects no channel of the archive; ${d.meant} ${offered(a)}`);
    }
  }
  return notes;
}

/**
 * Features trends.features (or trends.limits) names whose stages select no channel of the archive: they would be watched on
 * nothing, and say nothing. Only for a spec that lists its features: the default list is watched where it can be.
 */
export function unwatchedFeatureNotes(spec: ReductionSpec, trends: TrendOptions | null, a: ArchiveChannels, specFile = 'reduction.yaml'): string[] {
  if (!trends || !spec.trends?.features) return [];
  const stages = activeStages(spec);
  const empty = new Map<string, { group: string; only: ChannelSelector | undefined; features: string[] }>();
  for (const f of trends.features) {
    // The stage that writes the column (each octave set's own), else the group's.
    const inGroup = stages.filter((s) => s.definition.group === f.group);
    const writing = inGroup.filter((s) => s.definition.columns(s.options).some((c) => c.name === f.name));
    const of = writing.length ? writing : inGroup;
    if (!of.length || of.some((s) => standardOnly(s.only) || selectsSome(s.only, a))) continue;
    const key = `${f.group}\u0000${selectorKey(of[0].only)}`;
    (empty.get(key) ?? empty.set(key, { group: f.group, only: of[0].only, features: [] }).get(key)!).features.push(f.name);
  }
  return [...empty.values()].map(({ group, only, features }) => {
    const by = only ? [only.quantities?.length ? `quantities ${only.quantities.join(', ')}` : '', only.names?.length ? `names ${only.names.join(', ')}` : ''].filter(Boolean).join(' or ') : 'every channel';
    return `${specFile} trends.features watches ${features.join(', ')}, which the ${group} figures compute on no channel of the archive (they select ${by}), so no trend of ${features.length === 1 ? 'it' : 'them'} can change; ${offered(a)}`;
  });
}
