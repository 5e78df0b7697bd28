import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';

export function registerReport(program: Command): void {
  program
    .command('report')
    .description('write a self-contained HTML report of the project (not yet available)')
    .option('--out <file>', 'where to write the report')
    .action(() => {
      throw new ErrataError('NOT_AVAILABLE', 'errata report is not available yet', { hint: 'Use errata diff --format html for now.' });
    });
}
