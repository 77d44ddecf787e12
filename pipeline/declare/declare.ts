// Loads and checks archive.yaml (what the recordings are) and reduction.yaml (what to compute).
import { canonicalJson } from './canonical-json.js';
import { createHash } from 'node:crypto';
import { existsSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Hdf5Layout } from '../../stages/read/hdf5.js';
import type { MatLayout } from '../../stages/read/mat.js';
import type { RawLayout } from '../../stages/read/raw.js';
import type { ArchiveDeclaration, ChannelDeclaration, GroupDeclaration } from '../../spec/archive.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { packageRoot } from './package-files.js';
import { checkSpec } from './check-spec.js';
import { parseSpan } from '../select/select.js';
import { NO_QUANTITY_USES, quantityNote, unitNote, type QuantityUses } from './quantity-uses.js';
import { brokenGroup, groupName, groupOfProblem, readablePattern } from './broken-group.js';
import { formatProblems, parseYaml, parseYamlProblems, UsageError, yamlText, type Problem, type YamlSource } from './yaml-file.js';

/** Column names that labels may not take, since the table already has them. */
export const FIXED_COLUMNS = ['recording', 'group', 'channel', 'quantity', 'unit', 'sample_rate', 'n', 'duration_s', 'start_time'];

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

/** Labels seen so far, by their lower-case spelling: SQL readers take two that differ only in case as one column. */
type LabelsSeen = Map<string, { label: string; group: string }>;

/**
 * One group whose keys the schema accepts, with its defaults, and the problems the schema cannot see in it (a reversed range,
 * a channel named twice, a label that clashes, a section its format needs); `labelsSeen` gathers the labels of every group.
 */
function declareGroup(g: RawGroup, gi: number, source: YamlSource, reserved: readonly string[], uses: QuantityUses, labelsSeen: LabelsSeen): { group: GroupDeclaration; problems: Problem[]; notes: string[] } {
  const problems: Problem[] = [];
  const notes: string[] = [];
  const at = (...p: (string | number)[]) => ['groups', gi, ...p];
  for (const label of Object.keys(g.labels ?? {})) {
    // SQL readers (DuckDB, SQLite, most databases) take column names without regard to case: "Quality" is "quality" there.
    const same = (name: string) => name.toLowerCase() === label.toLowerCase();
    const fixed = FIXED_COLUMNS.find(same), other = reserved.find(same), earlier = labelsSeen.get(label.toLowerCase());
    const column = (name: string) => (name === label ? 'column of that name' : `column ${name} (SQL readers take names without regard to case, so "${label}" is "${name}" there)`);
    if (fixed) problems.push(source.problem(at('labels', label), `label "${label}" would clash with the ${column(fixed)}; rename the label`, true));
    else if (other) problems.push(source.problem(at('labels', label), `label "${label}" would clash with features.parquet's ${column(other)} under this reduction spec; rename the label`, true));
    else if (earlier && earlier.label !== label) problems.push(source.problem(at('labels', label), `label "${label}" differs from the label "${earlier.label}" ${earlier.group === g.name ? 'of the same group' : 'of another group'} only in case, and SQL readers take them as one column; spell them alike`, true));
    else labelsSeen.set(label.toLowerCase(), { label, group: g.name });
  }
  const channelNames = new Set<string>();
  const channels = g.channels?.map((c, ci): ChannelDeclaration => {
    if (channelNames.has(c.name!)) problems.push(source.problem(at('channels', ci, 'name'), `channel name "${c.name}" appears twice in this group`));
    channelNames.add(c.name!);
    const declared = { group: g.name, channel: c.name!, quantity: c.quantity, unit: c.unit, file: ARCHIVE_FILE, line: source.lineOf(at('channels', ci)) };
    for (const note of [quantityNote(declared, uses), unitNote(declared, uses)]) if (note) notes.push(note);
    if (c.range && !(c.range[0] < c.range[1])) problems.push(source.problem(at('channels', ci, 'range'), `range must be [lower, upper] with lower < upper, got [${c.range.join(', ')}]`));
    if (c.scale === 0) problems.push(source.problem(at('channels', ci, 'scale'), 'scale 0 would turn every sample into the offset; give the sensitivity in engineering units per stored unit'));
    for (const key of ['trigger_level', 'trigger_hysteresis'] as const) {
      if (c[key] != null && c.pulses_per_rev == null) problems.push(source.problem(at('channels', ci, key), `${key} applies to a tacho channel only; declare pulses_per_rev for it, or remove ${key}`));
    }
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
  if (g.format === 'raw' && !layout) problems.push(source.problem(at(), 'format raw needs a layout: { sample_type, byte_order, channels, header_bytes }'));
  if (g.format === 'raw' && g.sample_rate == null) problems.push(source.problem(at(), 'format raw needs sample_rate (Hz): raw files carry no header'));
  if (layout && channels && layout.channels !== channels.length) problems.push(source.problem(at('channels'), `layout says ${layout.channels} channels but ${channels.length} are declared`));
  const hdf5 = g.hdf5 ? hdf5Layout(g.hdf5) : null;
  if (g.format === 'hdf5' && !hdf5) problems.push(source.problem(at(), 'format hdf5 needs an hdf5 section: { datasets, channel_axis, sample_rate_attribute, start_time_attribute }'));
  if (hdf5 && hdf5.sample_rate_attribute == null && hdf5.sample_rate_dataset == null && hdf5.time_dataset == null && g.sample_rate == null) problems.push(source.problem(at('hdf5'), 'HDF5 files need a sample rate: declare sample_rate for the group, hdf5.sample_rate_attribute, hdf5.sample_rate_dataset or hdf5.time_dataset'));
  if (hdf5?.time_dataset != null && (hdf5.sample_rate_attribute != null || hdf5.sample_rate_dataset != null)) problems.push(source.problem(at('hdf5', 'time_dataset'), 'give the sample rate once: from hdf5.time_dataset, or hdf5.sample_rate_attribute or hdf5.sample_rate_dataset, not both'));
  for (const [attribute, dataset] of [['sample_rate_attribute', 'sample_rate_dataset'], ['start_time_attribute', 'start_time_dataset']] as const) {
    if (hdf5?.[attribute] != null && hdf5[dataset] != null) problems.push(source.problem(at('hdf5', dataset), `give it once: hdf5.${attribute} or hdf5.${dataset}, not both`));
  }
  if (hdf5 && hdf5.datasets.length > 1 && hdf5.channel_axis != null) problems.push(source.problem(at('hdf5', 'channel_axis'), 'channel_axis applies to one two-dimensional dataset; with one dataset per channel leave it out'));
  if (hdf5 && channels && hdf5.datasets.length > 1 && hdf5.datasets.length !== channels.length) problems.push(source.problem(at('channels'), `hdf5.datasets names ${hdf5.datasets.length} datasets (one per channel) but ${channels.length} channels are declared`));
  const mat = g.mat ? matLayout(g.mat) : null;
  if (g.format === 'mat' && !mat) problems.push(source.problem(at(), 'format mat needs a mat section: { variables, channel_axis, sample_rate_variable, start_time_variable }'));
  if (mat && mat.sample_rate_variable == null && mat.time_variable == null && g.sample_rate == null) problems.push(source.problem(at('mat'), 'MAT-files need a sample rate: declare sample_rate for the group, mat.sample_rate_variable or mat.time_variable'));
  if (mat && mat.sample_rate_variable != null && mat.time_variable != null) problems.push(source.problem(at('mat', 'time_variable'), 'give the sample rate once: mat.sample_rate_variable or mat.time_variable, not both'));
  if (mat && mat.variables.length > 1 && mat.channel_axis != null) problems.push(source.problem(at('mat', 'channel_axis'), 'channel_axis applies to one two-dimensional variable; with one variable per channel leave it out'));
  if (mat && channels && mat.variables.length > 1 && mat.variables.length !== channels.length) problems.push(source.problem(at('channels'), `mat.variables names ${mat.variables.length} variables (one per channel) but ${channels.length} channels are declared`));
  if (g.capture_every != null && !(parseSpan(g.capture_every) > 0)) problems.push(source.problem(at('capture_every'), 'capture_every must be a span longer than zero (12h, 1d, 1w)'));
  const flac = g.flac ? { start_time_tag: g.flac.start_time_tag ?? null } : null;
  const group = {
    name: g.name, match: Array.isArray(g.match) ? g.match : [g.match], format: g.format ?? null, sample_rate: g.sample_rate ?? null,
    labels: Object.fromEntries(Object.entries(g.labels ?? {}).map(([k, v]) => [k, String(v)])), layout, hdf5, mat, flac, channels, duration_s: g.duration_s ?? null, capture_every: g.capture_every?.trim() ?? null,
  };
  return { group, problems, notes };
}

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
  if (!existsSync(file)) throw new UsageError(`${file}: missing; every archive declares its recordings in ${ARCHIVE_FILE} at its root (see schemas/archive.schema.json and the README)`);
  const { value, source, infinite, invalid } = await parseYamlProblems(await yamlText(file), 'archive.schema.json', file);
  // A number that is not finite passes the schema's "number", so the schema says nothing more where it lies.
  const schemaProblems = [...infinite, ...invalid.filter((p) => !infinite.some((q) => q.path === p.path))];
  const rawGroups = (value as { groups?: unknown }).groups;
  if (schemaProblems.some((p) => groupOfProblem(p) < 0) || !Array.isArray(rawGroups)) throw new UsageError(formatProblems(schemaProblems));
  const everything: Problem[] = [...schemaProblems];
  // Why the run stops though the problems lie inside groups (none: it does not, or only the problems need saying).
  const stops: string[] = [];
  let stop = false;
  const notes: string[] = [];
  const names = new Set<string>();
  const labelsSeen: LabelsSeen = new Map();
  const groups = rawGroups.map((g: unknown, gi): GroupDeclaration => {
    const name = groupName(g, gi);
    if (names.has(name)) {
      everything.push(source.problem(['groups', gi, 'name'], `group name "${name}" is used twice; give each group its own name`));
      stop = true;
    }
    names.add(name);
    const refused = schemaProblems.filter((p) => groupOfProblem(p) === gi);
    const declared = refused.length ? null : declareGroup(g as RawGroup, gi, source, reserved, uses, labelsSeen);
    const problems = declared ? declared.problems : refused;
    if (declared) everything.push(...declared.problems);
    if (!problems.length) { notes.push(...declared!.notes); return declared!.group; }
    const match = readablePattern(g);
    if (!match) stops.push(`group ${name}'s match pattern cannot be read, so the files it is meant for could fall to another group; a run stops until ${ARCHIVE_FILE} line ${source.lineOf(['groups', gi])} is mended`);
    return brokenGroup(name, match ?? [], problems.map((p) => formatProblems([p])));
  });
  if (groups.length && groups.every((g) => g.broken)) stops.push(`no group of ${ARCHIVE_FILE} can be used, so a run would reduce nothing; it stops until the groups are mended`);
  if (stop || stops.length) throw new UsageError([formatProblems(everything), ...stops].join('\n'));
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
