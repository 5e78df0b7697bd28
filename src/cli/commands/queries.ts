import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { WorkingTree } from '../../git/tree.js';
import { exportQueries } from '../../queries/export-queries.js';
import { planAnswers } from '../../queries/import-answers.js';
import { sheetCells } from '../../queries/query-sheet.js';
import { readSheetCsv, writeSheetCsv } from '../../queries/sheet-csv.js';
import { readSheetXlsx, writeSheetXlsx } from '../../queries/sheet-xlsx.js';
import { writeNewFiles } from '../../queries/write-new-files.js';
import { renderConflicts } from '../../render/build-report.js';
import { renderExport, renderImportJson, renderImportText } from '../../render/queries.js';
import { checkTarget, tableCache } from '../build-session.js';
import { projectRoot, workDir } from '../context.js';
import { createOutput } from '../output.js';
import { formatOption } from '../options.js';
import { writeFileAtomically } from '../../write-file.js';

interface ExportOptions {
  out: string;
  raw?: boolean;
  rev?: string;
}

interface ImportOptions {
  answerer?: string;
  date?: string;
  dryRun?: boolean;
  format: 'text' | 'json';
}

export function registerQueries(program: Command, setExit: (code: number) => void): void {
  const queries = program.command('queries').description('query sheets: send open discrepancies to the person who decides them, read the answers back');
  queries
    .command('export')
    .description('write the open discrepancies (errata check) as a sheet to answer, one cell per row; answered queries are left out')
    .argument('[table]', 'only this table (default: every table with a codebook)')
    .requiredOption('--out <file>', 'the sheet to write: .xlsx (a workbook with a drop-down for the decision) or .csv')
    .option('--raw', 'ask about the raw deliveries as received instead of the clean build')
    .option('--rev <rev>', 'the project as it stood at this revision')
    .action(async (table: string | undefined, options: ExportOptions) => {
      const output = createOutput(program.opts());
      const kind = sheetKind(options.out);
      const root = await projectRoot();
      const result = await exportQueries(await checkTarget(root, output, { rev: options.rev, table, raw: options.raw }));
      output.endProgress();
      if (result.conflicts.length) output.err(`${renderConflicts(result.conflicts)}\nThe clean data is checked without these edits.`);
      const rows = result.queries.map(sheetCells);
      const content = kind === 'xlsx' ? await writeSheetXlsx(rows) : writeSheetCsv(rows);
      writeFileAtomically(options.out, content);
      output.out(renderExport(result, options.out));
    });
  queries
    .command('import')
    .description('read an answered sheet: one approval note per answer, a draft correction per new value, and the rows that could not be used (exit 1 when any)')
    .argument('<file>', 'the answered sheet (.xlsx or .csv)')
    .option('--answerer <person>', 'who answered, for rows whose answered_by is blank (an id in people.yaml)')
    .option('--date <YYYY-MM-DD>', 'the date of the answers, for rows whose answered_on is blank (default: today)')
    .option('--dry-run', 'check the answers and show what would be written, without writing')
    .addOption(formatOption(['text', 'json'], 'text'))
    .action(async (file: string, options: ImportOptions) => {
      const output = createOutput(program.opts());
      const kind = sheetKind(file);
      let content: Buffer;
      try {
        content = readFileSync(file);
      } catch (error) {
        throw new ErrataError('INPUT_MISSING', `cannot read ${file}: ${(error as NodeJS.ErrnoException).code ?? (error as Error).message}`, { hint: 'Give the path of the answered sheet.', data: { file } });
      }
      const rows = kind === 'xlsx' ? await readSheetXlsx(file, content) : readSheetCsv(file, content.toString('utf8'));
      const root = await projectRoot();
      output.progress('checking the answers against the clean data…');
      const plan = await planAnswers({
        tree: new WorkingTree(root),
        rows,
        sheet: file,
        answerer: options.answerer,
        date: options.date,
        today: new Date().toISOString().slice(0, 10),
        workDir: workDir(root),
        cache: tableCache(root),
      });
      output.endProgress();
      if (!options.dryRun) writeNewFiles(root, plan.files);
      if (options.format === 'json') process.stdout.write(renderImportJson(plan, { dryRun: Boolean(options.dryRun) }));
      else output.out(renderImportText(plan, output.color, { dryRun: Boolean(options.dryRun) }));
      if (plan.rejected.length) setExit(1);
    });
}

function sheetKind(file: string): 'csv' | 'xlsx' {
  const extension = path.extname(file).toLowerCase();
  if (extension === '.xlsx') return 'xlsx';
  if (extension === '.csv') return 'csv';
  throw new ErrataError('USAGE', `${file}: a query sheet is a .xlsx or .csv file`, { hint: 'Name the file with one of those extensions, e.g. --out queries.xlsx.' });
}
