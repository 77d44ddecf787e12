// Loads and checks archive.yaml (what the recordings are) and reduction.yaml (what to compute).
import { canonicalJson } from './canonical-json.js';
import { createHash } from 'node:crypto';
import { existsSync, statSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import type { Hdf5Layout } from '../../stages/read/hdf5.js';
import type { MatLayout } from '../../stages/read/mat.js';
import type { RawLayout } from '../../stages/read/raw.js';
import type { ArchiveDeclaration, ChannelDeclaration, GroupDeclaration } from '../../spec/archive.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { packageRoot } from './package-files.js';
import { checkSpec } from './check-spec.js';
import { NO_QUANTITY_USES, quantityNote, unitNote, type QuantityUses } from './quantity-uses.js';
import { brokenGroup, groupName, groupOfProblem, readablePattern } from './broken-group.js';
import { groupProblems, labelClashes, labelsOf, type LabelsSeen } from './group-problems.js';
import { formatProblems, parseYaml, parseYamlProblems, schemaProblems, UsageError, yamlText, type Problem, type YamlSource } from './yaml-file.js';

export { FIXED_COLUMNS } from './group-problems.js';

export const ARCHIVE_FILE = 'archive.yaml';
export const SPEC_FILE = 'reduction.yaml';

type RawGroup = Omit<Partial<GroupDeclaration>, 'match' | 'channels' | 'layout' | 'hdf5' | 'mat' | 'flac'> & {
  name: string; match: string | string[]; channels?: Partial<ChannelDeclaration>[]; layout?: Partial<RawLayout>;
  hdf5?: Omit<Partial<Hdf5Layout>, 'datasets'> & { datasets: string | string[] }; flac?: { start_time_tag?: string };
  mat?: Omit<Partial<MatLayout>, 'variables'> & { variables: string | string[] };
};

/** The HDF5 section with its defaults, dataset paths made absolute. */
function hdf5Layout(h: NonNullable<RawGroup['hdf5']>): Hdf5Layout {
  const datasets = (Array.isArray(h.datasets) ? h.datasets : [h.datasets]).map((d) => (d.startsWith('/') ? d : `/${d}`));
  const absolute = (d: string) => (d.startsWith('/') ? d : `/${d}`);
  return {
    datasets, channel_axis: h.channel_axis ?? null, sample_rate_attribute: h.sample_rate_attribute ?? null, start_time_attribute: h.start_time_attribute ?? null,
    // Only when declared, so that the declarations (and stored results' keys) of groups without them stay as they were.
    ...(h.sample_rate_dataset != null ? { sample_rate_dataset: absolute(h.sample_rate_dataset) } : {}),
    ...(h.start_time_dataset != null ? { start_time_dataset: absolute(h.start_time_dataset) } : {}),
    ...(h.time_dataset != null ? { time_dataset: absolute(h.time_dataset) } : {}),
    ...(h.channel_names_attribute != null ? { channel_names_attribute: h.channel_names_attribute } : {}),
  };
}

/** The MAT-file section with its defaults. */
function matLayout(m: NonNullable<RawGroup['mat']>): MatLayout {
  return {
    variables: Array.isArray(m.variables) ? m.variables : [m.variables], channel_axis: m.channel_axis ?? null, sample_rate_variable: m.sample_rate_variable ?? null, start_time_variable: m.start_time_variable ?? null,
    ...(m.time_variable != null ? { time_variable: m.time_variable } : {}),
    ...(m.channel_names_variable != null ? { channel_names_variable: m.channel_names_variable } : {}),
  };
}

/** One group whose keys the schema accepts and in which no problem was found, with its defaults, and the notes on its channels. */
function declareGroup(g: RawGroup, gi: number, source: YamlSource, uses: QuantityUses): { group: GroupDeclaration; notes: string[] } {
  const notes: string[] = [];
  const channels = g.channels?.map((c, ci): ChannelDeclaration => {
    const declared = { group: g.name, channel: c.name!, quantity: c.quantity, unit: c.unit, file: ARCHIVE_FILE, line: source.lineOf(['groups', gi, 'channels', ci]) };
    for (const note of [quantityNote(declared, uses), unitNote(declared, uses)]) if (note) notes.push(note);
    return {
      name: c.name!, quantity: c.quantity ?? 'unknown', unit: c.unit ?? 'FS', scale: c.scale ?? 1, offset: c.offset ?? 0,
      range: (c.range as [number, number] | undefined) ?? null, bits: c.bits ?? null, max_frequency_hz: c.max_frequency_hz ?? null,
      // Only tacho channels carry the pulse fields, so other declarations (and their cache keys) stay as they were.
      ...(c.pulses_per_rev != null ? { pulses_per_rev: c.pulses_per_rev, trigger_level: c.trigger_level ?? null, trigger_hysteresis: c.trigger_hysteresis ?? null } : {}),
      // Likewise a declared noise floor.
      ...(c.noise_floor != null ? { noise_floor: c.noise_floor } : {}),
      ...(c.alias_free_fraction != null ? { alias_free_fraction: c.alias_free_fraction } : {}),
    };
  }) ?? null;
  const layout = g.layout ? { sample_type: g.layout.sample_type!, byte_order: g.layout.byte_order ?? 'little', channels: g.layout.channels!, header_bytes: g.layout.header_bytes ?? 0 } : null;
  const hdf5 = g.hdf5 ? hdf5Layout(g.hdf5) : null;
  const mat = g.mat ? matLayout(g.mat) : null;
  const flac = g.flac ? { start_time_tag: g.flac.start_time_tag ?? null } : null;
  const group = {
    name: g.name, match: Array.isArray(g.match) ? g.match : [g.match], format: g.format ?? null, sample_rate: g.sample_rate ?? null,
    labels: Object.fromEntries(Object.entries(g.labels ?? {}).map(([k, v]) => [k, String(v)])), layout, hdf5, mat, flac, channels, duration_s: g.duration_s ?? null, capture_every: g.capture_every?.trim() ?? null,
  };
  return { group, notes };
}

/** A group's labels, one per spelling without regard to case (the group's own clashes are told by groupProblems). */
const firstSpellings = (labels: string[]): string[] => labels.filter((l, i) => labels.findIndex((m) => m.toLowerCase() === l.toLowerCase()) === i);

/**
 * archive.yaml as a run reads it. A group holding a problem (a key the schema refuses, a reversed range, a channel named
 * twice, a label that clashes) is kept as broken: it still claims the files its pattern matches, which fail with its
 * problems, while the other groups are reduced. What stops the run instead (UsageError, listing every problem): a problem
 * outside any group, two groups of one name, a broken group whose pattern cannot be read (its files could fall to
 * another group), or every group broken. `reserved`: the other column names of features.parquet under the run's spec
 * (quality, flags, the features), which labels may not take either; `uses`: the quantities the spec selects by, against
 * which declared quantities and units are noted.
 */
export async function readArchiveDeclaration(archive: string, reserved: readonly string[] = [], uses: QuantityUses = NO_QUANTITY_USES): Promise<ArchiveDeclaration> {
  const file = join(archive, ARCHIVE_FILE);
  if (!existsSync(archive)) throw new UsageError(`${archive}: no such archive folder; give the folder that holds ${ARCHIVE_FILE}`);
  if (statSync(archive).isFile()) {
    const instead = basename(archive) === ARCHIVE_FILE ? `give its folder, ${dirname(archive)}` : `give the folder that holds ${ARCHIVE_FILE} (quern peek ${archive} shows one recording)`;
    throw new UsageError(`${archive} is a file, not an archive folder: ${instead}`);
  }
  if (!existsSync(file)) throw new UsageError(`${file}: missing; every archive declares its recordings in ${ARCHIVE_FILE} at its root (see schemas/archive.schema.json and the README)`);
  const { value, source, infinite, invalid } = await parseYamlProblems(await yamlText(file), 'archive.schema.json', file);
  const refusedBySchema = schemaProblems(infinite, invalid);
  const rawGroups = (value as { groups?: unknown }).groups;
  if (refusedBySchema.some((p) => groupOfProblem(p) < 0) || !Array.isArray(rawGroups)) throw new UsageError(formatProblems(refusedBySchema));
  const everything: Problem[] = [...refusedBySchema];
  // Why the run stops though the problems lie inside groups (none: it does not, or only the problems need saying).
  const stops: string[] = [];
  let stop = false;
  const notes: string[] = [];
  const names = new Set<string>();
  const groupNames = rawGroups.map((g: unknown, gi) => groupName(g, gi));
  const refusedIn = rawGroups.map((_, gi) => refusedBySchema.filter((p) => groupOfProblem(p) === gi));
  // Looked for in a group the schema refused too, so that every problem of the group is told at once.
  const foundIn = rawGroups.map((g: unknown, gi) => groupProblems(g, gi, groupNames[gi], source, reserved, refusedIn[gi]));
  // Labels differing only in case across groups: a group broken already is left out of the others' checks (it is set aside,
  // so its labels make no column), and its own clashes with the usable groups are listed with its problems.
  const labelsSeen: LabelsSeen = new Map();
  const brokenAlready = rawGroups.map((_, gi) => refusedIn[gi].length > 0 || foundIn[gi].length > 0);
  for (const pass of [false, true]) {
    rawGroups.forEach((g: unknown, gi) => { if (brokenAlready[gi] === pass) foundIn[gi].push(...labelClashes(firstSpellings(labelsOf(g)), gi, groupNames[gi], source, labelsSeen)); });
  }
  const groups = rawGroups.map((g: unknown, gi): GroupDeclaration => {
    const name = groupNames[gi];
    if (names.has(name)) {
      everything.push(source.problem(['groups', gi, 'name'], `group name "${name}" is used twice; give each group its own name`));
      stop = true;
    }
    names.add(name);
    const refused = refusedIn[gi], found = foundIn[gi];
    everything.push(...found);
    if (!refused.length && !found.length) {
      const declared = declareGroup(g as RawGroup, gi, source, uses);
      notes.push(...declared.notes);
      return declared.group;
    }
    // In the order they are written, as the file is read when mending it.
    const problems = [...refused, ...found].sort((a, b) => a.line - b.line);
    const match = readablePattern(g);
    if (!match) stops.push(`group ${name}'s match pattern cannot be read, so the files it is meant for could fall to another group; a run stops until ${ARCHIVE_FILE} line ${source.lineOf(['groups', gi])} is mended`);
    return brokenGroup(name, match ?? [], problems.map((p) => formatProblems([p])));
  });
  if (groups.length && groups.every((g) => g.broken)) stops.push(`no group of ${ARCHIVE_FILE} can be used, so a run would reduce nothing; it stops until the groups are mended`);
  if (stop || stops.length) throw new UsageError([formatProblems(everything.sort((a, b) => a.line - b.line)), ...stops].join('\n'));
  return { file, groups, notes, lines: rawGroups.map((_, gi) => source.lineOf(['groups', gi])) };
}

/** archive.yaml with every group usable, as check and peek read it: any problem, inside a group or not, is named and stops them. */
export async function loadArchiveDeclaration(archive: string, reserved: readonly string[] = [], uses: QuantityUses = NO_QUANTITY_USES): Promise<ArchiveDeclaration> {
  const declaration = await readArchiveDeclaration(archive, reserved, uses);
  const problems = declaration.groups.flatMap((g) => g.broken ?? []);
  if (problems.length) throw new UsageError(problems.join('\n'));
  return declaration;
}

export interface LoadedSpec { spec: ReductionSpec; source: string; text: string; hash: string }

/** The spec from --spec, else reduction.yaml at the archive root, else the embedded default. */
export async function loadSpec(archive: string, specPath?: string | null): Promise<LoadedSpec> {
  const candidate = specPath ?? join(archive, SPEC_FILE);
  const given = specPath != null || existsSync(candidate);
  const file = given ? candidate : join(packageRoot, 'schemas', 'reduction.default.yaml');
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (e) {
    throw new UsageError(`${file}: cannot be read (${(e as NodeJS.ErrnoException).code ?? e}); check the --spec path`);
  }
  const { value, source } = await parseYaml(text, 'reduction.schema.json', given ? candidate : '(default spec)');
  const spec = value as ReductionSpec;
  const problems = checkSpec(spec, source);
  if (problems.length) throw new UsageError(formatProblems(problems));
  return { spec, source: given ? candidate : '(default)', text, hash: createHash('sha256').update(canonicalJson(spec)).digest('hex') };
}
