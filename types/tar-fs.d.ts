// The one function of tar-fs the tests use.
declare module 'tar-fs' {
  import type { Writable } from 'node:stream';
  export function extract(dir: string): Writable;
}
