import type { Command } from 'commander';
import { publishOutputs, stageOutputs } from '../../build/write-outputs.js';
import { projectRoot, projectTree, workDir } from '../context.js';
import { createOutput, type Output } from '../output.js';
import { buildWithProgress } from '../build-session.js';
import type { ProjectBuild } from '../../build/build-project.js';
import { renderConflicts, renderTypeProblems } from '../../render/build-report.js';
import { ErrataError } from '../../errors.js';

export function registerBuild(program: Command, setExit: (code: number) => void): void {
  program
    .command('build')
    .description('rebuild clean data from raw deliveries plus corrections, with cell lineage and a manifest')
    .argument('[table]', 'build only this table')
    .option('--rev <rev>', 'build the project as it stood at this revision (outputs go to --out)')
    .option('--out <dir>', 'write outputs under this folder instead of the project (needed with --rev)')
    .option('--allow-conflicts', 'write outputs even when guarded edits no longer match, listing the conflicts')
    .action(async (table: string | undefined, options: { rev?: string; out?: string; allowConflicts?: boolean }) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      if (options.rev && !options.out) {
        throw new ErrataError('USAGE', '--rev needs --out: a build of a past revision is not written over the working tree', {
          hint: 'Add --out DIR, e.g. errata build --rev HEAD~2 --out /tmp/old-build.',
        });
      }
      const tree = await projectTree(root, options.rev);
      const build = await buildWithProgress(tree, root, output, table, { keepRaw: false });
      try {
        reportProblems(build, output);
        if (build.conflicts.length && !options.allowConflicts) {
          output.err(output.color.red(`Nothing written: ${build.conflicts.length} conflict${build.conflicts.length > 1 ? 's' : ''}.`) + ' Update the edits to the current values, or pass --allow-conflicts.');
          setExit(1);
          return;
        }
        const staged = await stageOutputs(build, workDir(root), options.out ?? root);
        const written = publishOutputs(staged, options.out ?? root);
        for (const t of build.tables) {
          const lineage = staged.manifest.tables[t.config.name].outputs.lineage.records;
          output.out(`${t.config.name}: ${t.rows} rows, ${t.columns.length} columns, ${t.corrections.length} correction${t.corrections.length === 1 ? '' : 's'}, ${lineage} lineage record${lineage === 1 ? '' : 's'} → ${t.config.output}`);
        }
        output.out(output.color.dim(`wrote ${written.join(', ')}`));
        if (build.conflicts.length) setExit(1);
      } finally {
        build.session.close();
      }
    });
}

function reportProblems(build: ProjectBuild, output: Output): void {
  const types = renderTypeProblems(build.tables);
  if (types) output.err(types);
  if (build.conflicts.length) output.err(renderConflicts(build.conflicts));
}
