// What the schema cannot see in one group of archive.yaml (a reversed range, a channel named twice, a label that clashes, a
// section its format needs), looked for in any group, one the schema refused too: each check reads only values of its type.
import { parseSpan } from '../select/select.js';
import type { Problem, YamlSource } from './yaml-file.js';

/** Column names that labels may not take, since the table already has them. */
export const FIXED_COLUMNS = ['recording', 'group', 'channel', 'quantity', 'unit', 'sample_rate', 'n', 'duration_s', 'start_time'];

/** Labels seen so far, by their lower-case spelling: SQL readers take two that differ only in case as one column. */
export type LabelsSeen = Map<string, { label: string; group: string }>;

type Fields = Record<string, unknown>;

/** A section of the group, when it is a mapping; null when absent or of another type. */
const sectionOf = (v: unknown): Fields | null => (v !== null && typeof v === 'object' && !Array.isArray(v) ? (v as Fields) : null);

/** A mapping's keys and values; anything else (a list, a number, nothing) holds none. */
const fieldsOf = (v: unknown): Fields => sectionOf(v) ?? {};

/** A group's labels as written (none when it has no mapping of them). */
export const labelsOf = (g: unknown): string[] => Object.keys(fieldsOf(fieldsOf(g).labels));

/**
 * The labels of group `gi` that differ only in case from one in `seen` (its own earlier ones, or another group's), each a
 * problem; the others are added to `seen`.
 */
export function labelClashes(labels: readonly string[], gi: number, name: string, source: YamlSource, seen: LabelsSeen): Problem[] {
  const problems: Problem[] = [];
  for (const label of labels) {
    const earlier = seen.get(label.toLowerCase());
    if (earlier && earlier.label !== label) problems.push(source.problem(['groups', gi, 'labels', label], `label "${label}" differs from the label "${earlier.label}" ${earlier.group === name ? 'of the same group' : 'of another group'} only in case, and SQL readers take them as one column; spell them alike`, true));
    else if (!earlier) seen.set(label.toLowerCase(), { label, group: name });
  }
  return problems;
}

/** How many names a "one or a list" key gives (datasets, variables). */
const countOf = (v: unknown): number => (Array.isArray(v) ? v.length : 1);

/** A span's length in ms, or null for text that is no span (the schema's pattern names that). */
const spanOf = (text: string): number | null => {
  try {
    return parseSpan(text);
  } catch {
    return null;
  }
};

/** Whether the schema refused a key of the mapping at `path`: a key said to be missing there may be that one, misspelt. */
const refusedIn = (refused: readonly Problem[], path: (string | number)[]): boolean =>
  refused.some((p) => p.at.length === path.length + 1 && path.every((k, i) => p.at[i] === k));

/**
 * The problems of group `gi` that its schema does not catch. `g` is the group as written, of any shape: a value of the wrong
 * type is the schema's to name (`refused`: its problems in this group), so the checks that read it pass over it, and a key
 * is not said to be missing from a mapping where the schema refused one. Its labels are held against the table's columns and
 * against each other; against other groups' labels by `labelClashes`, once it is known which groups are broken.
 */
export function groupProblems(g: unknown, gi: number, name: string, source: YamlSource, reserved: readonly string[], refused: readonly Problem[] = []): Problem[] {
  const problems: Problem[] = [];
  const at = (...p: (string | number)[]) => ['groups', gi, ...p];
  // Where a key may be missing only because it is misspelt, the schema's unknown key says all there is.
  const sure = (...paths: (string | number)[][]) => !paths.some((p) => refusedIn(refused, at(...p)));
  const group = fieldsOf(g);
  const own: LabelsSeen = new Map();
  for (const label of Object.keys(fieldsOf(group.labels))) {
    // SQL readers (DuckDB, SQLite, most databases) take column names without regard to case: "Quality" is "quality" there.
    const same = (n: string) => n.toLowerCase() === label.toLowerCase();
    const fixed = FIXED_COLUMNS.find(same), other = reserved.find(same);
    const column = (n: string) => (n === label ? 'column of that name' : `column ${n} (SQL readers take names without regard to case, so "${label}" is "${n}" there)`);
    if (fixed) problems.push(source.problem(at('labels', label), `label "${label}" would clash with the ${column(fixed)}; rename the label`, true));
    else if (other) problems.push(source.problem(at('labels', label), `label "${label}" would clash with features.parquet's ${column(other)} under this reduction spec; rename the label`, true));
    else problems.push(...labelClashes([label], gi, name, source, own));
  }
  const channels = Array.isArray(group.channels) ? group.channels.map(fieldsOf) : null;
  const channelNames = new Set<string>();
  channels?.forEach((c, ci) => {
    if (typeof c.name === 'string') {
      if (channelNames.has(c.name)) problems.push(source.problem(at('channels', ci, 'name'), `channel name "${c.name}" appears twice in this group`));
      channelNames.add(c.name);
    }
    const range = c.range;
    if (Array.isArray(range) && range.length === 2 && range.every((v) => typeof v === 'number' && Number.isFinite(v)) && !(range[0] < range[1])) {
      problems.push(source.problem(at('channels', ci, 'range'), `range must be [lower, upper] with lower < upper, got [${range.join(', ')}]`));
    }
    if (c.scale === 0) problems.push(source.problem(at('channels', ci, 'scale'), 'scale 0 would turn every sample into the offset; give the sensitivity in engineering units per stored unit'));
    for (const key of ['trigger_level', 'trigger_hysteresis'] as const) {
      if (c[key] != null && c.pulses_per_rev == null && sure(['channels', ci])) problems.push(source.problem(at('channels', ci, key), `${key} applies to a tacho channel only; declare pulses_per_rev for it, or remove ${key}`));
    }
  });
  const layout = sectionOf(group.layout);
  if (group.format === 'raw' && group.layout == null && sure([])) problems.push(source.problem(at(), 'format raw needs a layout: { sample_type, byte_order, channels, header_bytes }'));
  if (group.format === 'raw' && group.sample_rate == null && sure([])) problems.push(source.problem(at(), 'format raw needs sample_rate (Hz): raw files carry no header'));
  if (layout && channels && typeof layout.channels === 'number' && layout.channels !== channels.length) problems.push(source.problem(at('channels'), `layout says ${layout.channels} channels but ${channels.length} are declared`));
  const hdf5 = sectionOf(group.hdf5);
  if (group.format === 'hdf5' && group.hdf5 == null && sure([])) problems.push(source.problem(at(), 'format hdf5 needs an hdf5 section: { datasets, channel_axis, sample_rate_attribute, start_time_attribute }'));
  if (hdf5 && hdf5.sample_rate_attribute == null && hdf5.sample_rate_dataset == null && hdf5.time_dataset == null && group.sample_rate == null && sure([], ['hdf5'])) problems.push(source.problem(at('hdf5'), 'HDF5 files need a sample rate: declare sample_rate for the group, hdf5.sample_rate_attribute, hdf5.sample_rate_dataset or hdf5.time_dataset'));
  if (hdf5 && hdf5.time_dataset != null && (hdf5.sample_rate_attribute != null || hdf5.sample_rate_dataset != null)) problems.push(source.problem(at('hdf5', 'time_dataset'), 'give the sample rate once: from hdf5.time_dataset, or hdf5.sample_rate_attribute or hdf5.sample_rate_dataset, not both'));
  for (const [attribute, dataset] of [['sample_rate_attribute', 'sample_rate_dataset'], ['start_time_attribute', 'start_time_dataset']] as const) {
    if (hdf5 && hdf5[attribute] != null && hdf5[dataset] != null) problems.push(source.problem(at('hdf5', dataset), `give it once: hdf5.${attribute} or hdf5.${dataset}, not both`));
  }
  if (hdf5 && hdf5.datasets != null) {
    const datasets = countOf(hdf5.datasets);
    if (datasets > 1 && hdf5.channel_axis != null) problems.push(source.problem(at('hdf5', 'channel_axis'), 'channel_axis applies to one two-dimensional dataset; with one dataset per channel leave it out'));
    if (channels && datasets > 1 && datasets !== channels.length) problems.push(source.problem(at('channels'), `hdf5.datasets names ${datasets} datasets (one per channel) but ${channels.length} channels are declared`));
  }
  const mat = sectionOf(group.mat);
  if (group.format === 'mat' && group.mat == null && sure([])) problems.push(source.problem(at(), 'format mat needs a mat section: { variables, channel_axis, sample_rate_variable, start_time_variable }'));
  if (mat && mat.sample_rate_variable == null && mat.time_variable == null && group.sample_rate == null && sure([], ['mat'])) problems.push(source.problem(at('mat'), 'MAT-files need a sample rate: declare sample_rate for the group, mat.sample_rate_variable or mat.time_variable'));
  if (mat && mat.sample_rate_variable != null && mat.time_variable != null) problems.push(source.problem(at('mat', 'time_variable'), 'give the sample rate once: mat.sample_rate_variable or mat.time_variable, not both'));
  if (mat && mat.variables != null) {
    const variables = countOf(mat.variables);
    if (variables > 1 && mat.channel_axis != null) problems.push(source.problem(at('mat', 'channel_axis'), 'channel_axis applies to one two-dimensional variable; with one variable per channel leave it out'));
    if (channels && variables > 1 && variables !== channels.length) problems.push(source.problem(at('channels'), `mat.variables names ${variables} variables (one per channel) but ${channels.length} channels are declared`));
  }
  const span = typeof group.capture_every === 'string' ? spanOf(group.capture_every) : null;
  if (span !== null && !(span > 0)) problems.push(source.problem(at('capture_every'), 'capture_every must be a span longer than zero (12h, 1d, 1w)'));
  return problems;
}
