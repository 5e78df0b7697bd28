import { statSync } from 'node:fs';
import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { gatherReport, type ReportProgress } from '../../report/gather-report.js';
import { reportRange } from '../../report/report-range.js';
import { REPORT_CELL_LIMIT, renderReportHtml } from '../../render/report-html.js';
import { tableCache } from '../build-session.js';
import { projectRoot, workDir } from '../context.js';
import { createOutput } from '../output.js';
import { writeFileAtomically } from '../../write-file.js';

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
        cache: tableCache(root),
        onProgress: (event) => output.progress(progressText(event)),
      }).finally(() => output.endProgress());
      output.progress('writing the report…');
      const file = path.resolve(options.out);
      writeFileAtomically(file, renderReportHtml(data, { cellLimit }), { code: 'REPORT', hint: 'Choose a writable place with --out FILE.' });
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
