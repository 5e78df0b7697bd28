import type { Command } from 'commander';
import { initProject } from '../../project/init-project.js';
import { createDemoProject } from '../../demo/create-demo.js';
import { createOutput } from '../output.js';

export function registerInit(program: Command): void {
  program
    .command('init')
    .description('create an empty data project (a git repository), or with --demo one holding an invented study')
    .argument('[dir]', 'folder to create (new or empty)', '.')
    .option('--demo', 'fill it with the demo study: a raw delivery, codebook, notes and corrections, each committed')
    .action(async (dir: string, options: { demo?: boolean }) => {
      const output = createOutput(program.opts());
      if (options.demo) {
        const summary = await createDemoProject(dir);
        output.out(`Created the demo project in ${summary.root}: ${summary.rows} rows, ${summary.columns} variables, ${summary.commits} commits.`);
        output.out('Next: cd into it and run `errata build`, then `errata log`.');
        return;
      }
      const created = await initProject(dir);
      output.out(`Created an empty data project in ${dir}: ${created.join(', ')}.`);
      output.out('Next: put a delivery under raw/<table>/, declare the table in errata.yaml, commit, then `errata build`.');
    });
}
