import { ident } from '../engine/sql.js';

/** ORDER BY for a table's key: the stable row order of every output. */
export function keyOrder(key: readonly string[], alias?: string): string {
  return key.map((k) => `${alias ? `${alias}.` : ''}${ident(k)} ASC NULLS LAST`).join(', ');
}
