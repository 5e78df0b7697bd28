import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { diffFiles, type FileDiffProgress } from '../../diff/file-diff.js';
import { splitRange } from '../../git/range.js';
import type { MultisetDiff, TableDiff } from '../../diff/types.js';
import { renderDiffHtml } from '../../render/diff-html.js';
import { renderDiffJson, renderMultisetJson } from '../../render/diff-json.js';
import { renderDiffMarkdown, renderMultisetMarkdown } from '../../render/diff-markdown.js';
import { renderDiffText, renderMultisetText } from '../../render/diff-text.js';
import { renderConflicts } from '../../render/build-report.js';
import { resolveRevision } from '../../git/repo.js';
import { projectRoot, projectTree, projectWorkDir, workDir } from '../context.js';
import { createOutput } from '../output.js';
import { formatOption } from '../options.js';
import { writeFileAtomically } from '../../write-file.js';

type Format = 'text' | 'markdown' | 'json' | 'html';

interface DiffCommandOptions {
  files?: string[];
  key?: string | false;
  raw?: boolean;
  format: Format;
  summary?: boolean;
  tolerance?: string;
  exitCode?: boolean;
  limit?: string;
  out?: string;
}

/** How many changed cells each format shows by default (JSON lists them all). */
const DEFAULT_LIMIT: Record<Format, number | undefined> = { text: 1000, markdown: 50, json: undefined, html: 20000 };

export function registerDiff(program: Command, setExit: (code: number) => void): void {
  program
    .command('diff')
    .description('cell-level diff: between two commits (BASE..HEAD), a commit and the working tree (REV), or two files (--files)')
    .argument('[range]', 'BASE..HEAD, or REV to compare with the working tree (default: HEAD)')
    .argument('[table]', 'only this table')
    .option('--files <files...>', 'diff two files outside a project: OLD NEW')
    .option('--key <columns>', 'key column(s) for --files, comma-separated')
    .option('--no-key', 'with --files: compare rows as multisets (no key)')
    .option('--raw', 'diff the raw deliveries instead of the clean builds')
    .addOption(formatOption(['text', 'markdown', 'json', 'html'], 'text'))
    .option('--summary', 'only the summary (with --format json: exactly the documented object)')
    .option('--tolerance <number>', 'numbers closer than this are equal')
    .option('--limit <n>', 'show at most this many changed cells (all are counted)')
    .option('--out <file>', 'write the output to a file (written atomically) instead of stdout')
    .option('--exit-code', 'exit 1 when there are differences')
    .action(async (range: string | undefined, table: string | undefined, options: DiffCommandOptions) => {
      const output = createOutput(program.opts());
      const tolerance = parseNumber(options.tolerance, '--tolerance');
      const limit = options.summary ? 0 : (parseNumber(options.limit, '--limit') ?? DEFAULT_LIMIT[options.format]);
      const emit = (text: string) => {
        if (!options.out) return output.out(text);
        writeFileAtomically(options.out, text);
      };
      if (options.files) {
        if (options.files.length !== 2) throw usage('--files takes two files: OLD NEW');
        if (options.key === undefined) throw usage('--files needs --key COL[,COL] (or --no-key to compare rows without a key)');
        const key = options.key === false ? [] : options.key.split(',').map((k) => k.trim()).filter(Boolean);
        output.progress('diffing files…');
        const result = await diffFiles(options.files[0], options.files[1], {
          key,
          tolerance,
          cellLimit: limit,
          // The documented summary object holds counts only.
          rowKeys: !(options.summary && options.format === 'json'),
          workDir: await projectWorkDir(),
          onProgress: (event) => output.progress(fileDiffProgressText(event)),
        });
        output.endProgress();
        emit(renderFileDiff(result, options, output.color));
        if (options.exitCode && hasDifferences(result)) setExit(1);
        return;
      }
      // Loaded here, not with the command: a diff of two files needs neither (nor the YAML parser).
      const [{ diffRevisions }, { diffCache, tableCache }] = await Promise.all([import('../../diff/revision-diff.js'), import('../build-session.js')]);
      const root = await projectRoot();
      const { base, head, tableName } = await parseRange(root, range, table);
      const work = workDir(root);
      const result = await diffRevisions({
        base: await projectTree(root, base),
        head: await projectTree(root, head),
        table: tableName,
        raw: options.raw,
        tolerance,
        cellLimit: limit,
        workDir: work,
        cache: tableCache(root),
        diffCache: diffCache(root),
        onProgress: (e) => output.progress(e.phase === 'diff' ? `diffing ${e.table}…` : e.phase === 'load' ? `loading ${e.table}…` : `building ${e.table}…`),
      });
      output.endProgress();
      if (result.conflicts.length) output.err(renderConflicts(result.conflicts));
      emit(renderTableDiffs(result.diffs, options, output.color, `errata diff ${base}..${head ?? 'working tree'}`));
      if (options.exitCode && result.diffs.some(hasDifferences)) setExit(1);
    });
}

function usage(message: string): ErrataError {
  return new ErrataError('USAGE', message, { hint: 'See errata diff --help.' });
}

function parseNumber(value: string | undefined, option: string): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (!Number.isFinite(n) || n < 0) throw usage(`${option} must be a number of zero or more, not "${value}"`);
  return n;
}

/**
 * [BASE..HEAD | REV] [TABLE]: a first argument that is neither a range nor a revision but a table name
 * means "that table, HEAD against the working tree".
 */
async function parseRange(root: string, range: string | undefined, table: string | undefined): Promise<{ base: string; head?: string; tableName?: string }> {
  if (range === undefined) return { base: 'HEAD', tableName: table };
  const split = splitRange(range, 'errata diff main..HEAD');
  if (split) return { ...split, tableName: table };
  try {
    await resolveRevision(root, range);
    return { base: range, tableName: table };
  } catch (error) {
    if (table === undefined && error instanceof ErrataError && error.code === 'REVISION_UNKNOWN') return { base: 'HEAD', tableName: range };
    throw error;
  }
}

function hasDifferences(diff: TableDiff | MultisetDiff): boolean {
  if ('onlyOld' in diff) return diff.rows.onlyOld + diff.rows.onlyNew > 0 || diff.columns.added.length + diff.columns.removed.length > 0;
  const s = diff.summary;
  return s.rows.added + s.rows.removed + s.rows.changed > 0 || s.columns.added.length + s.columns.removed.length + s.columns.retyped.length > 0;
}

function renderFileDiff(result: TableDiff | MultisetDiff, options: DiffCommandOptions, paint: Parameters<typeof renderDiffText>[1]): string {
  if ('onlyOld' in result) {
    if (options.format === 'json') return renderMultisetJson(result);
    if (options.format === 'markdown') return renderMultisetMarkdown(result);
    if (options.format === 'html') throw usage('--format html needs a keyed diff (give --key)');
    return renderMultisetText(result, paint);
  }
  return renderTableDiffs([result], options, paint, `errata diff ${options.files?.join(' ')}`);
}

function renderTableDiffs(diffs: TableDiff[], options: DiffCommandOptions, paint: Parameters<typeof renderDiffText>[1], title: string): string {
  switch (options.format) {
    case 'json':
      return renderDiffJson(diffs, Boolean(options.summary));
    case 'markdown':
      return renderDiffMarkdown(diffs);
    case 'html':
      return renderDiffHtml(diffs, title);
    case 'text':
      return diffs.map((d) => renderDiffText(d, paint)).join('\n');
  }
}

const FILE_DIFF_STEPS = { count: 'reading OLD', compare: 'comparing OLD and NEW', 'differing rows': 'comparing the rows that differ', 'whole files': 'loading both files' };

function fileDiffProgressText(event: FileDiffProgress): string {
  return `diffing files: ${FILE_DIFF_STEPS[event.step]}${'share' in event ? ` ${Math.floor(event.share * 100)} %` : ''}…`;
}
