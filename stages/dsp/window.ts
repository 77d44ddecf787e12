// Spectral analysis windows, periodic ("DFT-even") as spectral estimation uses them (Harris 1978; scipy.signal.get_window default).

export type WindowName = 'hann' | 'hamming' | 'boxcar';

/** Each window's constant term a of the generalised cosine form below (the boxcar is a = 1). */
export const COSINE_CONSTANT: Record<WindowName, number> = { hann: 0.5, hamming: 0.54, boxcar: 1 };

// Generalised cosine window w[n] = a − (1 − a)·cos(2πn/N), periodic form (Harris, Proc. IEEE 66(1), 1978).
const cosineWindow = (n: number, a: number) => Float64Array.from({ length: n }, (_, i) => a - (1 - a) * Math.cos((2 * Math.PI * i) / n));

/** A new window of that name and length, not kept (a whole short recording's, whose length is seldom met again). */
export function windowOf(name: WindowName, n: number): Float64Array {
  switch (name) {
    case 'hann':
    case 'hamming': return cosineWindow(n, COSINE_CONSTANT[name]);
    case 'boxcar': return new Float64Array(n).fill(1);
  }
}

// Windows are pure functions of (name, n): made once per thread and shared read-only.
const made = new Map<string, Float64Array>();

/** The window of that name and length; callers must not write into it. */
export function makeWindow(name: WindowName, n: number): Float64Array {
  const key = `${name}:${n}`;
  return made.get(key) ?? made.set(key, windowOf(name, n)).get(key)!;
}
