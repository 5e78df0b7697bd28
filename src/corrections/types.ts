import type { ValueType } from '../engine/column-types.js';

/** Where a step (or a value inside it) was written, for errors and the audit trail. */
export interface Origin {
  file: string;
  line: number;
}

export type Step =
  | { kind: 'set'; assignments: Array<{ column: string; expression: string }>; where?: string; origin: Origin }
  | { kind: 'edit'; cells: CellEdit[]; origin: Origin }
  | { kind: 'recode'; column: string; map: Array<{ from: string; to: string | null }>; otherwise: RecodeElse; origin: Origin }
  | { kind: 'missing'; columns: string[]; values: string[]; where?: string; origin: Origin }
  | { kind: 'convert'; column: string; to: ValueType; as: string; invalid: 'error' | 'missing'; origin: Origin }
  | { kind: 'rename'; renames: Array<{ from: string; to: string }>; origin: Origin }
  | { kind: 'drop'; columns: string[]; origin: Origin }
  | { kind: 'delete'; where: string; reason: string; origin: Origin }
  | { kind: 'derive'; columns: Array<{ name: string; expression: string }>; origin: Origin };

export type StepKind = Step['kind'];

/** What a recode does with values its map does not name. */
export type RecodeElse = { keep: true } | { missing: true } | { value: string };

/** One guarded cell edit: applied only while the cell still holds `from` (null: must be missing). */
export interface CellEdit {
  key: string;
  column: string;
  from: string | null;
  to: string | null;
  origin: Origin;
}

export interface Correction {
  /** Repository-relative path, e.g. corrections/visits/0003-weights.yaml. */
  file: string;
  /** The file name without folder, e.g. 0003-weights.yaml: its identity in lineage. */
  id: string;
  number: number;
  table: string;
  reason: string;
  approval?: string;
  steps: Step[];
}
