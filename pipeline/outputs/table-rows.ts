// Rows gathered column by column as they are added, straight into typed columns: a slice's rows leave no object per row
// behind. The table comes out as toArrowTable would make it from the rows.
import * as arrow from 'apache-arrow';
import type { FeatureRow } from '../reduce/result.js';
import { columnsTable, NumberColumn, TextColumn, type Column } from './arrow-columns.js';
import type { TableColumn } from './parquet.js';

/** int64 values kept as they come (few columns, and BigInt only once the table is made). */
class IntegerColumn {
  values: (number | null)[] = [];
  get length(): number { return this.values.length; }
  add(v: number | null): void { this.values.push(v); }
  data(): arrow.Data {
    return arrow.vectorFromArray(this.values.map((v) => (v == null ? null : BigInt(v))), new arrow.Int64()).data[0] ?? arrow.makeData({ type: new arrow.Int64(), length: 0, nullCount: 0 });
  }
}

export class TableRows {
  private readonly built: Record<string, Column | IntegerColumn>;
  length = 0;
  constructor(readonly columns: TableColumn[]) {
    this.built = Object.fromEntries(columns.map((c) => [c.name, c.type === 'string' ? new TextColumn() : c.type === 'int64' ? new IntegerColumn() : new NumberColumn(c.type)]));
  }

  add(row: FeatureRow): void {
    this.length++;
    for (const c of this.columns) {
      const v = row[c.name] ?? null;
      // A missing value of a number column that allows none is 0, as a Float64Array makes it.
      if (c.type === 'string') (this.built[c.name] as TextColumn).add(v == null ? null : String(v));
      else (this.built[c.name] as NumberColumn | IntegerColumn).add(v == null && !c.nullable ? 0 : (v as number | null));
    }
  }

  /** The rows as a table; `described` as in arrowSchema. */
  table(metadata: Record<string, string>, described = true): arrow.Table {
    return columnsTable(this.columns, this.built as Record<string, Column>, metadata, described);
  }
}
