import { mkdirSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { gatherReport, type ReportProgress } from '../../report/gather-report.js';
import { reportRange } from '../../report/report-range.js';
import { REPORT_CELL_LIMIT, renderReportHtml } from '../../render/report-html.js';
import { projectRoot, workDir } from '../context.js';
import { createOutput } from '../output.js';

interface ReportCommandOptions {
  out: string;
  range?: string;
  cellLimit?: string;
}

export function registerReport(program: Command): void {
  program
    .command('report')
    .description('write one self-contained HTML page for reviewers: overview, raw-against-clean profile with plots, discrepancies by rule, the filterable cell-level diff, the review, the audit trail and the approval notes')
    .option('--out <file>', 'where to write the page (written atomically)', 'report.html')
    .option(
      '--range <BASE..HEAD>',
      'the commits whose changes the diff and review cover (default: HEAD against its merge base with the main branch; on the main branch itself, against the commit before the first correction)',
    )
    .option('--cell-limit <n>', `embed at most this many changed cells; the page says how many more there are (default: ${REPORT_CELL_LIMIT})`)
    .action(async (options: ReportCommandOptions) => {
      const output = createOutput(program.opts());
      const cellLimit = parseLimit(options.cellLimit);
      const root = await projectRoot();
      const range = await reportRange(root, options.range);
      const data = await gatherReport({
        root,
        range,
        cellLimit,
        workDir: workDir(root),
        cache: { dir: path.join(root, '.errata', 'cache', 'tables'), write: true },
        onProgress: (event) => output.progress(progressText(event)),
      }).finally(() => output.endProgress());
      output.progress('writing the report…');
      const file = path.resolve(options.out);
      writeAtomically(file, renderReportHtml(data, { cellLimit }));
      output.endProgress();
      output.err(`wrote ${path.relative(process.cwd(), file) || file} (${(statSync(file).size / 1e6).toFixed(1)} MB)`);
    });
}

function parseLimit(value: string | undefined): number {
  if (value === undefined) return REPORT_CELL_LIMIT;
  const n = Number(value);
  if (!Number.isInteger(n) || n < 0) {
    throw new ErrataError('USAGE', `--cell-limit must be a whole number of zero or more, not "${value}"`, { hint: 'See errata report --help.' });
  }
  return n;
}

function writeAtomically(file: string, text: string): void {
  const temp = `${file}.${process.pid}.tmp`;
  try {
    mkdirSync(path.dirname(file), { recursive: true });
    writeFileSync(temp, text);
    renameSync(temp, file);
  } catch (error) {
    rmSync(temp, { force: true });
    throw new ErrataError('REPORT', `could not write the report to ${file}: ${(error as Error).message}`, {
      hint: 'Choose a writable place with --out FILE.',
      data: { file },
      cause: error,
    });
  }
}

const PHASE_TEXT: Record<ReportProgress['phase'], string> = {
  profile: 'profiling raw and clean',
  check: 'checking against the codebook',
  diff: 'diffing the range',
  review: 'reviewing the range',
  audit: 'reading the audit trail',
};

function progressText(event: ReportProgress): string {
  return `${PHASE_TEXT[event.phase]}${event.table ? ` (${event.table})` : ''}…`;
}
