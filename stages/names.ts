// Column-name pieces: frequencies as written in the spec, with "p" for a decimal point (31.5 Hz → "31p5"), so names stay plain SQL identifiers.
export const hzName = (f: number) => String(f).replace('.', 'p');
