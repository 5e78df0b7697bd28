import { ident } from '../engine/sql.js';
import type { ProjectBuild } from '../build/build-project.js';

export interface CorrectionPreview {
  cells: number;
  byColumn: Record<string, number>;
  sample: Array<{ key: string; column: string; old: string | null; new: string | null }>;
}

/** What one correction changed in a build: cells per column and the first few changes. */
export async function correctionPreview(build: ProjectBuild, table: string, correction: string, sampleSize = 10): Promise<CorrectionPreview> {
  const lineage = ident(build.tables.find((t) => t.config.name === table)!.lineageTable);
  const counts = await build.session.all<{ column: string; n: bigint }>(
    `SELECT "column", count(*) AS n FROM ${lineage} WHERE "correction" = $1 AND "change" = 'cell' GROUP BY ALL ORDER BY ALL`,
    [correction],
  );
  const sample = await build.session.all<{ key: string; column: string; old: string | null; new: string | null }>(
    `SELECT "key", "column", "old", "new" FROM ${lineage} WHERE "correction" = $1 AND "change" = 'cell' ORDER BY "key", "column" LIMIT ${sampleSize}`,
    [correction],
  );
  const byColumn = Object.fromEntries(counts.map((c) => [c.column, Number(c.n)]));
  return { cells: Object.values(byColumn).reduce((a, b) => a + b, 0), byColumn, sample };
}
