// Complex arithmetic for filter design, on plain {re, im} pairs.
export interface C { re: number; im: number }
export const c = (re: number, im = 0): C => ({ re, im });
export const add = (a: C, b: C): C => c(a.re + b.re, a.im + b.im);
export const sub = (a: C, b: C): C => c(a.re - b.re, a.im - b.im);
export const mul = (a: C, b: C): C => c(a.re * b.re - a.im * b.im, a.re * b.im + a.im * b.re);
export const div = (a: C, b: C): C => { const d = b.re * b.re + b.im * b.im; return c((a.re * b.re + a.im * b.im) / d, (a.im * b.re - a.re * b.im) / d); };
export const scale = (a: C, s: number): C => c(a.re * s, a.im * s);
export const abs = (a: C) => Math.hypot(a.re, a.im);
export const expi = (theta: number): C => c(Math.cos(theta), Math.sin(theta));
/** Principal square root. */
export const sqrt = (a: C): C => { const r = abs(a); const re = Math.sqrt((r + a.re) / 2); const im = Math.sqrt(Math.max(0, (r - a.re) / 2)); return c(re, a.im < 0 ? -im : im); };
export const prod = (xs: C[]): C => xs.reduce(mul, c(1));
