import type { Command } from 'commander';
import { fileOrigins } from '../../audit/history.js';
import { explainCell } from '../../audit/why.js';
import { loadNotes } from '../../project/notes.js';
import { loadPeople } from '../../project/people.js';
import { renderWhyJson, renderWhyText } from '../../render/why.js';
import { buildWithProgress } from '../build-session.js';
import { projectRoot, projectTree } from '../context.js';
import { createOutput } from '../output.js';
import { formatOption } from '../options.js';

export function registerWhy(program: Command): void {
  program
    .command('why')
    .description("explain a clean cell: its raw value, then every correction that changed it, with reason and approval")
    .argument('<table>', 'table name')
    .argument('<key>', 'the row key (for a key of several columns: values separated by commas)')
    .argument('<column>', 'column name in the clean table')
    .option('--rev <rev>', 'as the project stood at this revision')
    .addOption(formatOption(['text', 'json'], 'text'))
    .action(async (table: string, key: string, column: string, options: { rev?: string; format: 'text' | 'json' }) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      const tree = await projectTree(root, options.rev);
      const build = await buildWithProgress(tree, root, output, table);
      try {
        const notes = await loadNotes(tree);
        const origins = await fileOrigins(tree);
        const people = new Map((await loadPeople(tree)).map((p) => [p.id, p]));
        const history = await explainCell(build, { table, key: key.split(','), column }, notes, origins, people);
        output.out(options.format === 'json' ? renderWhyJson(history) : renderWhyText(history, output.color));
      } finally {
        build.session.close();
      }
    });
}
