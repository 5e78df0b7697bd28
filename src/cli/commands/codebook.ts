import { existsSync } from 'node:fs';
import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { draftCodebook } from '../../check/draft-codebook.js';
import { WorkingTree } from '../../git/tree.js';
import { tableCache } from '../build-session.js';
import { projectRoot, workDir } from '../context.js';
import { createOutput } from '../output.js';
import { writeFileAtomically } from '../../write-file.js';

interface DraftOptions {
  out?: string;
  force?: boolean;
}

export function registerCodebook(program: Command): void {
  const codebook = program.command('codebook').description("codebooks: each table's variables, types, allowed values and rules");
  codebook
    .command('draft')
    .description('propose a codebook from the raw delivery, for you to edit (never overwrites one without --force)')
    .argument('<table>', 'table name')
    .option('--out <file>', "write here instead of the table's codebook path from errata.yaml (- for standard output)")
    .option('--force', 'replace an existing codebook')
    .action(async (table: string, options: DraftOptions) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      output.progress(`drafting a codebook for ${table}…`);
      const draft = await draftCodebook({
        tree: new WorkingTree(root),
        table,
        workDir: workDir(root),
        cache: tableCache(root),
      });
      output.endProgress();
      if (options.out === '-') {
        output.out(draft.text);
        return;
      }
      const target = options.out ? path.resolve(options.out) : path.join(root, draft.file);
      const shown = path.relative(process.cwd(), target) || target;
      if (existsSync(target) && !options.force) {
        throw new ErrataError('OUTPUT_WRITE', `${shown} already exists; a draft never replaces a codebook on its own`, {
          hint: 'Pass --force to replace it, --out FILE to write the draft elsewhere, or --out - to print it.',
          data: { file: shown },
        });
      }
      writeFileAtomically(target, draft.text);
      output.out(`wrote ${shown}: a draft from the raw data; review every field before relying on errata check`);
    });
}

