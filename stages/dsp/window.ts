// Spectral analysis windows, periodic ("DFT-even") as spectral estimation uses them (Harris 1978; scipy.signal.get_window default).

export type WindowName = 'hann' | 'hamming' | 'boxcar';

// Generalised cosine window w[n] = a − (1 − a)·cos(2πn/N), periodic form (Harris, Proc. IEEE 66(1), 1978).
const cosineWindow = (n: number, a: number) => Float64Array.from({ length: n }, (_, i) => a - (1 - a) * Math.cos((2 * Math.PI * i) / n));

/** A new window of that name and length, not kept (a whole short recording's, whose length is seldom met again). */
export function windowOf(name: WindowName, n: number): Float64Array {
  switch (name) {
    case 'hann': return cosineWindow(n, 0.5);
    case 'hamming': return cosineWindow(n, 0.54);
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
