import type { ValueType } from '../engine/column-types.js';

/** A value as text (the way errata writes it everywhere) and how many rows hold it. */
export interface ValueCount {
  value: string;
  count: number;
}

/** One row of a coded variable's frequency table; `value` null is the missing row. */
export interface Frequency {
  value: string | null;
  /** The code's label from the codebook, if it has one. */
  label: string | null;
  count: number;
  /** Percent of all rows (missing included), rounded to two decimals. */
  percent: number;
  cumulative: number;
}

/** One equal-width bin: `from <= value < to`, except that the last bin of a number column also holds `to`. */
export interface HistogramBin {
  from: number;
  to: number;
  count: number;
}

export interface Histogram {
  /** How the bin count was chosen (see histogram.ts). */
  rule: 'sturges' | 'sturges-integer';
  bins: HistogramBin[];
}

/** A row's key (as `keyExpression` gives it) and the value it holds. */
export interface KeyedValue {
  key: string;
  value: string;
}

export interface Extremes {
  lowest: KeyedValue[];
  highest: KeyedValue[];
}

/** Why a value looks like a code for "missing" rather than a measurement; see sentinels.ts. */
export type SentinelReason = 'declared-missing' | 'code-gap' | 'negative' | 'far-out';

export type Flag =
  | {
      kind: 'number-as-text';
      message: string;
      /** The type the column would take without the values that block it. */
      type: 'integer' | 'number';
      /** Non-missing values that are not numbers (or would print differently as one), most frequent first. */
      blocking: ValueCount[];
      /** Rows holding a blocking value. */
      count: number;
      keys: string[];
    }
  | {
      kind: 'sentinel';
      message: string;
      value: string;
      count: number;
      reason: SentinelReason;
      keys: string[];
    }
  | {
      kind: 'outside-codebook';
      message: string;
      rule: 'enum' | 'minimum' | 'maximum';
      /** The codebook's bound for minimum and maximum; null for enum. */
      limit: string | null;
      values: ValueCount[];
      count: number;
      keys: string[];
    }
  | {
      kind: 'code-variants';
      message: string;
      /** The spellings that differ only in case or white space, most frequent first. */
      spellings: ValueCount[];
    };

export type FlagKind = Flag['kind'];

/**
 * A variable's profile. The first keys, in this order, are the documented JSON of `profile --format json`;
 * statistics that do not apply to the column's type are null.
 */
export interface ColumnProfile {
  name: string;
  type: ValueType;
  n: number;
  missing: number;
  distinct: number;
  mean: number | null;
  sd: number | null;
  min: number | null;
  q1: number | null;
  median: number | null;
  q3: number | null;
  max: number | null;
  top: ValueCount[];
  histogram: Histogram | null;
  extremes: Extremes | null;
  frequencies: Frequency[] | null;
  flags: Flag[];
}

/** Which data a profile describes. */
export type ProfileSource = 'raw' | 'clean' | 'file';

export interface TableProfile {
  table: string;
  source: ProfileSource;
  rows: number;
  /** Key columns; empty when rows are addressed by their data row number. */
  key: string[];
  columns: ColumnProfile[];
}

/** A variable's raw and clean profiles; one side is null when the column exists on the other side only. */
export interface ColumnComparison {
  name: string;
  /** The raw column's name when a correction renamed it. */
  rawName: string | null;
  raw: ColumnProfile | null;
  clean: ColumnProfile | null;
  /** Flags the raw profile raises and the clean one no longer does. */
  resolved: Flag[];
  /** Flags only the clean profile raises. */
  introduced: Flag[];
}

export interface TableComparison {
  table: string;
  rows: { raw: number; clean: number };
  key: string[];
  columns: ColumnComparison[];
}
