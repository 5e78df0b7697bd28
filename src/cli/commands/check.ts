import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { checkFile } from '../../check/check-file.js';
import { checkProject } from '../../check/check-project.js';
import type { TableCheck } from '../../check/types.js';
import { renderConflicts } from '../../render/build-report.js';
import { checkFailed, checkJsonChunks, renderCheckText } from '../../render/check.js';
import { checkTarget } from '../build-session.js';
import { projectRoot } from '../context.js';
import { createOutput } from '../output.js';
import { formatOption } from '../options.js';

interface CheckOptions {
  raw?: boolean;
  rev?: string;
  files?: string;
  codebook?: string;
  key?: string;
  format: 'text' | 'json';
  limit?: string;
}

export function registerCheck(program: Command, setExit: (code: number) => void): void {
  program
    .command('check')
    .description('check data against its codebook: every violation as a discrepancy (exit 1 when any is an error)')
    .argument('[table]', 'check only this table (default: every table with a codebook)')
    .option('--raw', 'check the raw deliveries as received instead of the clean build')
    .option('--rev <rev>', 'check the project as it stood at this revision')
    .option('--files <file>', 'check one file outside a project (needs --codebook)')
    .option('--codebook <file>', 'the codebook to check --files against')
    .option('--key <columns>', 'with --files: the column(s) naming each row, comma-separated (default: the codebook\'s primaryKey)')
    .addOption(formatOption(['text', 'json'], 'text'))
    .option('--limit <n>', 'text output: show at most this many discrepancies per rule (all are counted)', '20')
    .action(async (table: string | undefined, options: CheckOptions) => {
      const output = createOutput(program.opts());
      const limit = Number(options.limit);
      if (!Number.isInteger(limit) || limit < 0) throw usage(`--limit must be a whole number, not "${options.limit}"`);
      let tables: TableCheck[];
      if (options.files !== undefined || options.codebook !== undefined) {
        if (!options.files || !options.codebook) throw usage('--files and --codebook go together: errata check --files FILE --codebook CODEBOOK');
        if (table || options.raw || options.rev) throw usage('--files checks one file outside the project; it takes no TABLE, --raw or --rev');
        const key = options.key?.split(',').map((k) => k.trim()).filter(Boolean);
        output.progress('checking…');
        tables = [await checkFile(options.files, options.codebook, { key })];
      } else {
        if (options.key) throw usage('--key goes with --files; a project table\'s key comes from errata.yaml');
        const root = await projectRoot();
        const result = await checkProject(await checkTarget(root, output, { rev: options.rev, table, raw: options.raw }));
        output.endProgress();
        for (const s of result.skipped) output.err(output.color.dim(`${s.table}: no codebook (${s.codebook}), not checked`));
        if (result.conflicts.length) output.err(`${renderConflicts(result.conflicts)}\nThe clean data is checked without these edits.`);
        tables = result.tables;
      }
      output.endProgress();
      if (options.format === 'json') for (const chunk of checkJsonChunks(tables)) process.stdout.write(chunk);
      else output.out(renderCheckText(tables, output.color, { limit }));
      if (checkFailed(tables)) setExit(1);
    });
}

function usage(message: string): ErrataError {
  return new ErrataError('USAGE', message, { hint: 'See errata check --help.' });
}
