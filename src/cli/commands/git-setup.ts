import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Command } from 'commander';
import { installDiffDriver, removeDiffDriver } from '../../git/diff-driver.js';
import { loadConfig } from '../../project/config.js';
import { WorkingTree } from '../../git/tree.js';
import { projectRoot } from '../context.js';
import { createOutput } from '../output.js';

/** bin/errata.js of this installation, so the driver runs the same errata that set it up. */
const LAUNCHER = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../../bin/errata.js');

export function registerGitSetup(program: Command): void {
  program
    .command('git-setup')
    .description("make plain `git diff` and `git log -p` show cell-level diffs of this project's data files")
    .option('--undo', 'remove the diff driver and its .gitattributes lines')
    .action(async (options: { undo?: boolean }) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      if (options.undo) {
        const removed = await removeDiffDriver(root);
        output.out(removed ? 'Removed the errata diff driver; git diff shows data files as text again.' : 'The errata diff driver was not set up here.');
        return;
      }
      const config = await loadConfig(new WorkingTree(root));
      const patterns = config.tables.flatMap((t) => [path.extname(t.raw) ? t.raw : `${t.raw}/**`, t.output]);
      const command = `${shellQuote(process.execPath)} ${shellQuote(LAUNCHER)} git-diff-driver`;
      const lines = await installDiffDriver(root, command, patterns);
      output.out(`git diff now shows cell-level diffs for:\n${lines.map((l) => `  ${l}`).join('\n')}`);
      output.out('Commit .gitattributes to share the paths; each clone runs `errata git-setup` once for the driver.');
    });

  program
    .command('git-diff-driver', { hidden: true })
    .description('called by git as a diff driver: PATH OLD-FILE OLD-HEX OLD-MODE NEW-FILE NEW-HEX NEW-MODE')
    .argument('<args...>')
    .action(async (args: string[]) => {
      const { runDiffDriver } = await import('../git-diff-driver.js');
      await runDiffDriver(args, createOutput({ quiet: true }));
    });
}

function shellQuote(text: string): string {
  return `'${text.replaceAll("'", "'\\''")}'`;
}
