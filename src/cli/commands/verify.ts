import type { Command } from 'commander';
import { compareOutputs } from '../../build/verify.js';
import { discardStaged, stageOutputs } from '../../build/write-outputs.js';
import { renderConflicts } from '../../render/build-report.js';
import { showValue } from '../../render/paint.js';
import { buildWithProgress } from '../build-session.js';
import { projectRoot, projectTree, workDir } from '../context.js';
import { createOutput } from '../output.js';

export function registerVerify(program: Command, setExit: (code: number) => void): void {
  program
    .command('verify')
    .description('rebuild and check that the clean outputs, lineage and manifest match what is there (exit 1 on any mismatch)')
    .option('--rev <rev>', 'verify the outputs committed at this revision instead of the working tree')
    .action(async (options: { rev?: string }) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      const tree = await projectTree(root, options.rev);
      const build = await buildWithProgress(tree, root, output, undefined, { keepRaw: false });
      try {
        if (build.conflicts.length) {
          output.err(renderConflicts(build.conflicts));
          output.out(`${tree.label}: the rebuild has conflicts, so its outputs cannot match.`);
          setExit(1);
          return;
        }
        const staged = await stageOutputs(build, workDir(root), tree.commit ? workDir(root) : root);
        try {
          const mismatches = await compareOutputs(staged, tree);
          if (mismatches.length === 0) {
            output.out(`${tree.label}: ${staged.files.size} outputs match the rebuild.`);
            return;
          }
          output.out(output.color.red(`${tree.label}: ${mismatches.length} output${mismatches.length > 1 ? 's differ' : ' differs'} from the rebuild`));
          for (const m of mismatches) {
            if (m.problem === 'missing') output.out(`  ${m.path}: missing (run errata build)`);
            else if (m.line) output.out(`  ${m.path}:${m.line}: committed ${showValue(m.committed)}, rebuild gives ${showValue(m.rebuilt)}`);
            else output.out(`  ${m.path}: content differs`);
          }
          output.out('Clean outputs are made by errata build, never by hand: rebuild and commit the result.');
          setExit(1);
        } finally {
          discardStaged(staged);
        }
      } finally {
        build.session.close();
      }
    });
}
