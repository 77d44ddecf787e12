// A folder's tables and reports are exported only when they are one run's: a run stopped while putting its outputs in
// place leaves the new tables beside the previous run.json, and a spreadsheet would then pair rows and facts of two runs.
import { UsageError } from '../declare/yaml-file.js';

/** A file of the folder and the run it names as its writer (null: it names none, written before files named their run). */
export interface WrittenBy { file: string; runId: string | null }

/**
 * The run whose outputs run.json describes (`outputs.written_by_run`: a run that found them unchanged names the run that
 * wrote them), held against the run each output names; refuses a folder where they differ, naming the files of each run.
 */
export function checkOneRun(dir: string, run: { run_id?: string; outputs?: { written_by_run?: string } }, files: WrittenBy[]): void {
  const expected = run.outputs?.written_by_run ?? run.run_id;
  if (!expected) return;
  const others = files.filter((f) => f.runId != null && f.runId !== expected);
  if (!others.length) return;
  const byRun = new Map<string, string[]>();
  for (const f of others) (byRun.get(f.runId!) ?? byRun.set(f.runId!, []).get(f.runId!)!).push(f.file);
  const theirs = [...byRun].map(([id, names]) => `${names.join(', ')} by run ${id}`).join('; ');
  throw new UsageError(`${dir}: the outputs are not one run's: run.json describes outputs written by run ${expected}, but ${theirs}. A run was stopped while putting its outputs in place; run quern reduce (or quern merge) into the folder again, then export`);
}
