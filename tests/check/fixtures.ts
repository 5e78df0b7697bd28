import path from 'node:path';
import { checkFile } from '../../src/check/check-file.js';
import type { Discrepancy } from '../../src/check/types.js';
import { removeDir, tempDir, writeFiles } from '../helpers/project.js';

/** Temporary folders the check tests write their fixtures into, removed after the run. */
const folders: string[] = [];

export function removeFixtures(): void {
  folders.splice(0).forEach(removeDir);
}

/** Write a delivery and a codebook to a temporary folder and check the one against the other. */
export async function checkFixture(csv: string, codebook: string, options: { key?: string[] } = {}): Promise<Discrepancy[]> {
  const dir = tempDir('errata-check-');
  folders.push(dir);
  writeFiles(dir, { 'data.csv': csv, 'codebook.yaml': codebook });
  const result = await checkFile(path.join(dir, 'data.csv'), path.join(dir, 'codebook.yaml'), options);
  return result.discrepancies;
}

/** The discrepancies of one rule as (key, value) pairs, the part each fixture below pins down. */
export function found(discrepancies: readonly Discrepancy[], rule: string): Array<[string | null, string | null]> {
  return discrepancies.filter((d) => d.rule === rule).map((d) => [d.key, d.value]);
}

/** Rows of a CSV file from arrays; fields are written as given (quote them in the test where needed). */
export function csv(header: string, ...rows: string[]): string {
  return [header, ...rows].join('\n') + '\n';
}
