import { accessSync, constants, mkdirSync, rmSync, statSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { columnTypeFits } from '../engine/column-types.js';
import { columnsOf, formatOf, readHeader } from '../engine/load-table.js';
import { loadCheckedFile } from '../engine/load-typed.js';
import { Session } from '../engine/session.js';
import { removeAbandoned } from '../process-alive.js';
import { scanAligned, type AlignedScan, type AlignedScanOptions } from './aligned-scan.js';
import { diffRowMultisets } from './multiset-diff.js';
import { diffTables } from './table-diff.js';
import type { MultisetDiff, TableDiff } from './types.js';

export interface FileDiffOptions {
  /** Key columns; absent or empty: compare rows as multisets. */
  key?: string[];
  tolerance?: number;
  cellLimit?: number;
  /** List the keys of added and removed rows (see DiffOptions.rowKeys); default true. */
  rowKeys?: boolean;
  memoryLimit?: string;
  /**
   * Where DuckDB may spill: a folder of this process's own is made under it and removed afterwards.
   * The command line gives the project's .errata/tmp when run inside a project; default: the system's
   * temporary folder.
   */
  workDir?: string;
  onProgress?: (event: FileDiffProgress) => void;
}

/**
 * What a long file diff is doing: the aligned scan counting the old file and comparing the two (each
 * with the share done), then the engine on the rows that differ; or the engine loading both files.
 */
export type FileDiffProgress = { step: 'count' | 'compare'; share: number } | { step: 'differing rows' | 'whole files' };

/** Diff two files outside any project (`errata diff --files OLD NEW`). */
export async function diffFiles(oldFile: string, newFile: string, options: FileDiffOptions): Promise<TableDiff | MultisetDiff> {
  // Spill folders of diffs that were killed go with the next diff in the same project.
  if (options.workDir) removeAbandoned(options.workDir, /^errata-spill-(\d+)$/);
  const spillDir = path.join(options.workDir ?? os.tmpdir(), `errata-spill-${process.pid}`);
  // DuckDB's limit covers its buffers, not everything the process holds: with 1.4 GB and freed memory
  // returned, a diff of two 10,000,000-row files peaked at 1.78 GB in all (2.5 GB with a 2 GB limit
  // and the allocator's defaults; 1.86-1.92 GB with 1.5 GB).
  const opened: { session: Session | null } = { session: null };
  const openSession = async () => (opened.session ??= await Session.open({ memoryLimit: options.memoryLimit ?? '1.4GB', spillDir, returnFreedMemory: true }));
  const key = options.key ?? [];
  const table = path.basename(newFile);
  const parts = partFiles(spillDir, oldFile);
  // The engine loads the parts as soon as the walk has written them, while the aligned scan's workers
  // finish counting and the scan checks the keys: loading DuckDB takes 0.2 s, each part a second on
  // ten million rows, and the two parts load at once.
  const loading: { parts: Promise<boolean> | null } = { parts: null };
  let oneThread = false;
  const loadPartsMeanwhile = async (walked: WalkedLines) => {
    const session = await openSession();
    // Parts this small are diffed faster on one thread: 0.83 s against 1.06 s for 67,000 lines.
    oneThread = walked.oldLines + walked.newLines < ONE_THREAD_LINES;
    if (oneThread) await session.run('SET threads = 1');
    loading.parts = loadParts(session, parts, walked, key);
    loading.parts.catch(() => undefined); // awaited below, whatever the scan finds
  };
  // The parts are diffed while the scan checks the keys; their diff is the answer only if the scan
  // then answers `aligned`.
  let partsDiff: TableDiff | null = null;
  const diffParts = async (aligned: AlignedParts) => {
    if (!(await loading.parts)) return;
    options.onProgress?.({ step: 'differing rows' });
    partsDiff = await diffTables(await openSession(), 'old_side', 'new_side', {
      key,
      table,
      tolerance: options.tolerance,
      cellLimit: options.cellLimit,
      rowKeys: options.rowKeys,
      deliveredText: { oldFits: aligned.oldFits },
      parts: { newRows: aligned.newRows },
    });
  };
  try {
    const aligned = key.length ? await alignedParts(oldFile, newFile, key, parts, options.onProgress, { meanwhile: loadPartsMeanwhile, whileKeysChecked: diffParts }) : null;
    if (aligned?.kind === 'aligned' && partsDiff) return partsDiff;
    // Settled before anything else runs on the session, even when the scan found the parts unsuitable.
    await loading.parts;
    const session = await openSession();
    if (oneThread) await session.run('RESET threads');
    options.onProgress?.({ step: 'whole files' });
    // Kept as delivered text: compared by the types decided over each whole column, shown as written.
    await loadCheckedFile(session, oldFile, 'old_side', { key });
    await loadCheckedFile(session, newFile, 'new_side', { key });
    if (key.length === 0) return await diffRowMultisets(session, 'old_side', 'new_side', { table, rowLimit: options.cellLimit });
    // Only the old side is counted over every row; the new side's types are worked out from these
    // counts and the rows that differ. Key columns are matched as text and never compared.
    const oldText = (await columnsOf(session, 'old_side')).filter((c) => c.type === 'VARCHAR' && !key.includes(c.name)).map((c) => c.name);
    const oldFits = await columnTypeFits(session, 'old_side', oldText);
    return await diffTables(session, 'old_side', 'new_side', {
      key,
      table,
      tolerance: options.tolerance,
      cellLimit: options.cellLimit,
      rowKeys: options.rowKeys,
      deliveredText: { oldFits },
    });
  } finally {
    // A load still running when the scan failed must end before the engine closes.
    await loading.parts?.catch(() => undefined);
    opened.session?.close();
    rmSync(spillDir, { recursive: true, force: true });
  }
}

type AlignedParts = Extract<AlignedScan, { kind: 'aligned' }>;

interface WalkedLines {
  oldLines: number;
  newLines: number;
}

/** Where the aligned scan writes its parts: in the diff's own folder, with OLD's extension. */
function partFiles(spillDir: string, oldFile: string): { oldPart: string; newPart: string } {
  const extension = formatOf(oldFile) === 'tsv' ? 'tsv' : 'csv';
  return { oldPart: path.join(spillDir, `old-part.${extension}`), newPart: path.join(spillDir, `new-part.${extension}`) };
}

const ONE_THREAD_LINES = 200_000;

/**
 * The lines of two CSV or TSV files that may differ, by the aligned scan (aligned-scan.ts), or why the
 * files need the whole-file diff.
 */
async function alignedParts(
  oldFile: string,
  newFile: string,
  key: readonly string[],
  parts: { oldPart: string; newPart: string },
  onProgress: FileDiffOptions['onProgress'],
  hooks: Pick<AlignedScanOptions, 'meanwhile' | 'whileKeysChecked'>,
): Promise<AlignedScan> {
  // A missing or unreadable file is the whole-file diff's to report, with its message.
  if (![oldFile, newFile].every(isReadableFile)) return { kind: 'unsuitable', reason: 'a file is missing or not a file' };
  const format = formatOf(oldFile);
  if ((format !== 'csv' && format !== 'tsv') || formatOf(newFile) !== format) return { kind: 'unsuitable', reason: 'not both CSV or both TSV' };
  const delimiter = format === 'tsv' ? '\t' : ',';
  let header: string[];
  try {
    header = readHeader({ name: oldFile, localPath: path.resolve(oldFile), format }, delimiter);
  } catch (error) {
    if (error instanceof ErrataError) return { kind: 'unsuitable', reason: error.message };
    throw error;
  }
  mkdirSync(path.dirname(parts.oldPart), { recursive: true });
  try {
    return await scanAligned(oldFile, newFile, {
      delimiter,
      header,
      key,
      ...parts,
      onProgress: onProgress && ((step, share) => onProgress({ step, share })),
      ...hooks,
    });
  } catch (error) {
    // A file that cannot be read, or parts that cannot be written (a full disk): the whole-file diff
    // meets the same trouble and reports it as it always has. Memory that cannot be had is the
    // whole-file diff's to do without: it spills to disk. What the engine says of the parts' diff
    // (which runs within the scan) is the answer, as it would be after the scan.
    if (error instanceof ErrataError) throw error;
    if (typeof (error as NodeJS.ErrnoException).code === 'string') return { kind: 'unsuitable', reason: (error as NodeJS.ErrnoException).code! };
    if (error instanceof RangeError) return { kind: 'unsuitable', reason: error.message };
    throw error;
  }
}

function isReadableFile(file: string): boolean {
  try {
    accessSync(file, constants.R_OK);
    return statSync(file).isFile();
  } catch {
    return false;
  }
}

/**
 * Load the parts of an aligned scan, one on each of two connections at once. False when the engine
 * finds a problem in them, or reads a part's lines as fewer rows (a line break inside quotes in the
 * new file joins two): the whole files are then diffed, so that the answer is the engine's and any
 * message names the file and line the user has.
 */
async function loadParts(session: Session, parts: Pick<AlignedParts, 'oldPart' | 'newPart'>, walked: WalkedLines, key: readonly string[]): Promise<boolean> {
  const second = await session.connectAgain();
  try {
    const loads = await Promise.allSettled([
      loadCheckedFile(session, parts.oldPart, 'old_side', { key }),
      loadCheckedFile(second, parts.newPart, 'new_side', { key }),
    ]);
    for (const load of loads) {
      if (load.status === 'fulfilled') continue;
      if (load.reason instanceof ErrataError) return false;
      throw load.reason;
    }
  } finally {
    second.close();
  }
  const rows = await session.one<{ old: bigint; new: bigint }>(`SELECT (SELECT count(*) FROM old_side) AS old, (SELECT count(*) FROM new_side) AS new`);
  return Number(rows.old) === walked.oldLines && Number(rows.new) === walked.newLines;
}
