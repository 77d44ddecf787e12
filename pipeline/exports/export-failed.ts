// An export that could not be written: which file and why, that none of its files was put in place, and what to do.
import { WriteFailed } from '../outputs/staged.js';

export class ExportFailed extends WriteFailed {
  constructor(file: string, reason: unknown, readonly dir: string, readonly formats: string[], { afterRun = false } = {}) {
    super(file, reason);
    const mend = this.forbidden ? `Let quern write into ${dir} (or copy the folder somewhere writable and export the copy)` : this.code === 'EISDIR' ? 'Move that folder away' : 'Free space or raise the limit';
    // After reduce or merge --export the run's own outputs were written before the export began: only the export is missing.
    const before = afterRun ? `the run's outputs are written and in place in ${dir}; only the export failed: ` : '';
    this.message = `${before}cannot write ${file}: ${this.what}; no file of this export was put in place (the previous export, if any, is kept as it was). ${mend}, then run quern export ${dir} --to ${formats.join(',')}`;
  }

  /** An export's failure says itself where the run's outputs and the previous export stand. */
  override standing(): string { return this.message; }

  /** The same failure, said after a run (reduce or merge --export) whose outputs are in place. */
  afterRun(): ExportFailed {
    return new ExportFailed(this.file, this.reason, this.dir, this.formats, { afterRun: true });
  }
}
