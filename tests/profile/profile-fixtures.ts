import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll } from 'vitest';
import { WorkingTree } from '../../src/git/tree.js';
import { profileFile } from '../../src/profile/profile-file.js';
import { profileProject } from '../../src/profile/profile-project.js';
import type { ColumnProfile, TableProfile } from '../../src/profile/types.js';
import { removeDir, tempDir, writeFiles } from '../helpers/project.js';

/** Temporary folders made by the helpers below, removed after the file's tests. */
const made: string[] = [];
afterAll(() => made.forEach(removeDir));

/** A CSV file with one header line and the given rows, profiled as `errata profile --files` would. */
export async function profileCsv(text: string, key?: string[]): Promise<TableProfile> {
  const dir = tempDir('errata-profile-');
  made.push(dir);
  const file = path.join(dir, 'data.csv');
  writeFileSync(file, text);
  return profileFile(file, { key, spillDir: path.join(dir, 'spill') });
}

/** One column of data as a CSV (with an id key), profiled; the column's profile. */
export async function profileValues(column: string, values: readonly string[]): Promise<ColumnProfile> {
  const rows = values.map((v, i) => `${i + 1},${v}`);
  const profile = await profileCsv(`id,${column}\n${rows.join('\n')}\n`, ['id']);
  return columnOf(profile, column);
}

/** A project on disk (no git needed for the working tree), profiled raw and clean. */
export async function profileFolder(files: Record<string, string>) {
  const root = tempDir('errata-profile-project-');
  made.push(root);
  writeFiles(root, files);
  return profileProject({ tree: new WorkingTree(root), raw: true, clean: true, workDir: path.join(root, '.errata', 'tmp') });
}

export function columnOf(profile: TableProfile, name: string): ColumnProfile {
  const column = profile.columns.find((c) => c.name === name);
  if (!column) throw new Error(`no column ${name} in the profile`);
  return column;
}

/**
 * Significant digits two numbers agree to: −log10(|estimate − certified| / |certified|), the "log
 * relative error" used to grade software against the NIST StRD (Infinity when equal).
 */
export function agreeingDigits(estimate: number, certified: number): number {
  if (estimate === certified) return Infinity;
  return -Math.log10(Math.abs(estimate - certified) / Math.abs(certified));
}
