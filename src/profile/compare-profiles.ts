import type { ColumnComparison, Flag, TableComparison, TableProfile } from './types.js';

/**
 * Pair a table's raw and clean profiles variable by variable, following renames (and typed copies that
 * replaced their original), and list the flags the corrections cleared and those they brought. Clean
 * columns come first in clean order, then columns only the raw delivery has.
 *
 * @example
 *   compareProfiles(raw, clean, { height_cm: 'height' }).columns[0] // { name: 'height_cm', rawName: 'height', resolved: [sentinel 999], … }
 */
export function compareProfiles(raw: TableProfile, clean: TableProfile, renamed: Record<string, string> = {}): TableComparison {
  const rawColumns = new Map(raw.columns.map((c) => [c.name, c]));
  const paired = new Set<string>();
  const cleanNames = new Set(clean.columns.map((c) => c.name));
  const columns: ColumnComparison[] = clean.columns.map((after) => {
    // A typed copy of a column that is still there is a new variable; the original keeps its own pair.
    const source = renamed[after.name];
    const rawName = source && !cleanNames.has(source) ? source : after.name;
    const before = rawColumns.get(rawName) ?? null;
    if (before) paired.add(rawName);
    return pair(after.name, rawName === after.name ? null : rawName, before, after);
  });
  for (const before of raw.columns) if (!paired.has(before.name)) columns.push(pair(before.name, null, before, null));
  return { table: clean.table, rows: { raw: raw.rows, clean: clean.rows }, key: clean.key, columns };
}

function pair(name: string, rawName: string | null, raw: ColumnComparison['raw'], clean: ColumnComparison['clean']): ColumnComparison {
  const rawFlags = raw?.flags ?? [];
  const cleanFlags = clean?.flags ?? [];
  const cleanIds = new Set(cleanFlags.map(flagIdentity));
  const rawIds = new Set(rawFlags.map(flagIdentity));
  return {
    name,
    rawName: raw && rawName ? rawName : null,
    raw,
    clean,
    resolved: clean ? rawFlags.filter((f) => !cleanIds.has(flagIdentity(f))) : [],
    introduced: raw ? cleanFlags.filter((f) => !rawIds.has(flagIdentity(f))) : [],
  };
}

/**
 * What makes two flags the same problem on both sides: the kind, and the value, rule or code it is
 * about (a sentinel 999 is one problem whether 3 rows or 2 hold it).
 */
export function flagIdentity(flag: Flag): string {
  switch (flag.kind) {
    case 'number-as-text':
      return flag.kind;
    case 'sentinel':
      return `${flag.kind}:${flag.value}`;
    case 'outside-codebook':
      return `${flag.kind}:${flag.rule}`;
    case 'code-variants':
      return `${flag.kind}:${flag.spellings[0].value.replace(/\s+/g, ' ').trim().toLowerCase()}`;
  }
}
