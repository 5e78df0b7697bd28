import type { Command } from 'commander';
import { auditTrail } from '../../audit/audit-trail.js';
import { fileOrigins } from '../../audit/history.js';
import { loadNotes } from '../../project/notes.js';
import { loadPeople } from '../../project/people.js';
import { renderAuditLog, type LogFormat } from '../../render/audit-log.js';
import { buildWithProgress } from '../build-session.js';
import { projectRoot, projectTree } from '../context.js';
import { createOutput } from '../output.js';
import { formatOption } from '../options.js';

export function registerLog(program: Command): void {
  program
    .command('log')
    .description('the audit trail: every correction with its date, author, reason, approval and the cells it changed')
    .argument('[table]', 'only this table')
    .option('--rev <rev>', 'as the project stood at this revision')
    .addOption(formatOption(['text', 'markdown', 'csv', 'json'], 'text'))
    .action(async (table: string | undefined, options: { rev?: string; format: LogFormat }) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      const tree = await projectTree(root, options.rev);
      const build = await buildWithProgress(tree, root, output, table);
      try {
        const people = new Map((await loadPeople(tree)).map((p) => [p.id, p]));
        const entries = await auditTrail(build, await loadNotes(tree), await fileOrigins(tree), people);
        output.out(renderAuditLog(entries, options.format, output.color));
      } finally {
        build.session.close();
      }
    });
}
