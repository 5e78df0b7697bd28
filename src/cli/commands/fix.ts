import { existsSync, unlinkSync } from 'node:fs';
import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { composeSetCorrection, nextCorrectionPath } from '../../corrections/new-correction.js';
import { commitAuthor, commitPaths } from '../../git/repo.js';
import { WorkingTree } from '../../git/tree.js';
import { findTable, loadConfig } from '../../project/config.js';
import { loadNotes } from '../../project/notes.js';
import { correctionPreview } from '../../audit/correction-preview.js';
import { renderConflicts } from '../../render/build-report.js';
import { showValue } from '../../render/paint.js';
import { buildWithProgress } from '../build-session.js';
import { projectRoot } from '../context.js';
import { createOutput } from '../output.js';
import { writeFileAtomically } from '../../write-file.js';

interface FixOptions {
  set: string[];
  where?: string;
  reason: string;
  approval: string;
  commit?: boolean;
}

export function registerFix(program: Command, setExit: (code: number) => void): void {
  program
    .command('fix')
    .description('write the next correction file for a table, check it, preview the cells it changes, and optionally commit it')
    .argument('<table>', 'table name')
    .requiredOption('--set <assignment...>', 'COL=EXPR: a DuckDB SQL expression over the row (repeatable)')
    .option('--where <expr>', 'only rows where this SQL condition holds')
    .requiredOption('--reason <text>', 'why: the decision in a sentence')
    .requiredOption('--approval <note-id>', 'the approval note (notes/<id>.md) the decision is recorded in')
    .option('--commit', 'commit the correction, with the reason and approval as message trailers')
    .action(async (table: string, options: FixOptions) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      const tree = new WorkingTree(root);
      const config = findTable(await loadConfig(tree), table);
      const notes = await loadNotes(tree);
      if (!notes.has(options.approval)) {
        throw new ErrataError('NOTE_INVALID', `no approval note ${options.approval} in notes/`, {
          hint: `Record the decision first: errata note add --id ${options.approval} --approver ID --approves TEXT --evidence TEXT.`,
        });
      }
      const assignments = options.set.map(parseAssignment);
      const file = await nextCorrectionPath(tree, config.corrections, options.reason);
      const { text, correction } = composeSetCorrection(file, { table, assignments, where: options.where, reason: options.reason, approval: options.approval });
      const full = path.join(root, file);
      if (existsSync(full)) throw new ErrataError('CORRECTION_NAME', `${file} already exists`, { hint: 'Try again; another correction took that number.' });
      writeFileAtomically(full, text);
      let build;
      try {
        build = await buildWithProgress(tree, root, output, table, { keepRaw: false });
      } catch (error) {
        unlinkSync(full);
        throw error;
      }
      try {
        const preview = await correctionPreview(build, table, correction.id);
        output.out(`wrote ${file}`);
        output.out(`it changes ${preview.cells} cell${preview.cells === 1 ? '' : 's'}${preview.cells ? `: ${Object.entries(preview.byColumn).map(([c, n]) => `${c} ${n}`).join(', ')}` : ''}`);
        for (const s of preview.sample) output.out(`  ${config.key.join(',')}=${s.key}  ${s.column}: ${output.color.red(showValue(s.old))} → ${output.color.green(showValue(s.new))}`);
        if (preview.cells > preview.sample.length) output.out(output.color.dim(`  … and ${preview.cells - preview.sample.length} more`));
        if (build.conflicts.length) output.err(renderConflicts(build.conflicts));
        if (preview.cells === 0) output.err('warning: this correction changes no cell; review will flag it.');
        if (options.commit) {
          const author = await commitAuthor(root);
          if (!author) throw new ErrataError('GIT', 'no author to commit as', { hint: 'Set git config user.name and user.email, then run again with --commit, or commit the file yourself.' });
          const message = `${options.reason.split('\n')[0]}\n\nErrata-Correction: ${file}\nErrata-Reason: ${options.reason.replace(/\n/g, ' ')}\nErrata-Approval: ${options.approval}\n`;
          const oid = await commitPaths(root, [file], message, author);
          output.out(`committed ${oid.slice(0, 7)}`);
        }
        if (build.conflicts.length) setExit(1);
      } finally {
        build.session.close();
      }
    });
}

function parseAssignment(text: string): { column: string; expression: string } {
  const at = text.indexOf('=');
  const column = at > 0 ? text.slice(0, at).trim() : '';
  if (!column || at === text.length - 1) {
    throw new ErrataError('USAGE', `--set "${text}" is not COL=EXPR`, { hint: "Write e.g. --set height_cm='round(height_cm * 2.54, 1)'." });
  }
  return { column, expression: text.slice(at + 1).trim() };
}
