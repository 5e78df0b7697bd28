import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';

export function registerQueries(program: Command): void {
  program
    .command('queries')
    .description('query sheets for the researcher (not yet available)')
    .action(() => {
      throw new ErrataError('NOT_AVAILABLE', 'errata queries is not available yet', { hint: 'Use errata check for now.' });
    });
}
