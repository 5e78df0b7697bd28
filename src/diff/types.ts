/** One changed cell: the row's key, the column, and the old and new values as text (null: missing). */
export interface CellChange {
  key: string;
  column: string;
  old: string | null;
  new: string | null;
  /** The correction that produced the new value, where the head's lineage knows it. */
  correction?: string | null;
}

/** The summary object `diff --format json --summary` prints, key order as documented. */
export interface DiffSummary {
  rows: { added: number; removed: number; changed: number; unchanged: number };
  cells: { changed: number };
  columns: { added: string[]; removed: string[]; retyped: string[] };
}

export interface ColumnRetype {
  column: string;
  from: string;
  to: string;
}

export interface TableDiff {
  table: string;
  key: string[];
  summary: DiffSummary;
  retyped: ColumnRetype[];
  /** A removed and an added column holding the same values in every row. */
  renamed: Array<{ from: string; to: string }>;
  addedKeys: string[];
  removedKeys: string[];
  /** Changed cells in key order, then column order; at most the limit asked for. */
  cells: CellChange[];
  /** True when `cells` holds every changed cell. */
  complete: boolean;
}

/** Without a key: rows compared as a multiset (how many times each distinct row occurs on each side). */
export interface RowCount {
  values: Record<string, string | null>;
  count: number;
}

export interface MultisetDiff {
  table: string;
  columns: { added: string[]; removed: string[]; compared: string[] };
  onlyOld: RowCount[];
  onlyNew: RowCount[];
  rows: { old: number; new: number; onlyOld: number; onlyNew: number; common: number };
  complete: boolean;
}
