// The feature groups quern computes, in column order. Adding a stage means adding it here.
import type { ReductionSpec } from '../pipeline/declare.js';
import type { ColumnSpec, StageDefinition } from './stage.js';
import { statistics } from './stats.js';

export interface ActiveStage { definition: StageDefinition<any>; options: any; only: { names?: string[]; quantities?: string[] } | undefined }

/** The stages a spec asks for; statistics always run, since every other figure leans on them. */
export function activeStages(spec: ReductionSpec): ActiveStage[] {
  return [
    { definition: statistics, options: {}, only: spec.statistics?.only },
  ];
}

export function featureColumns(spec: ReductionSpec): ColumnSpec[] {
  return activeStages(spec).flatMap((s) => s.definition.columns(s.options));
}
