import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { commitAuthor, commitPaths } from '../../git/repo.js';
import { WorkingTree } from '../../git/tree.js';
import { composeNote } from '../../project/new-note.js';
import { loadPeople } from '../../project/people.js';
import { projectRoot } from '../context.js';
import { createOutput } from '../output.js';
import { writeFileAtomically } from '../../write-file.js';

interface NoteOptions {
  id: string;
  approver: string;
  role?: string;
  date?: string;
  approves: string;
  evidence?: string;
  evidenceFile?: string;
  commit?: boolean;
}

export function registerNote(program: Command): void {
  const note = program.command('note').description('approval notes: the recorded decisions corrections cite');
  note
    .command('add')
    .description('write a new approval note (notes are never edited once committed: add a new one instead)')
    .requiredOption('--id <id>', 'note id, e.g. N-0012 (the file is notes/<id>.md)')
    .requiredOption('--approver <person>', 'the id of the person in people.yaml who decided')
    .option('--role <role>', "the approver's role, e.g. principal investigator")
    .option('--date <YYYY-MM-DD>', 'the date of the decision (default: today)')
    .requiredOption('--approves <text>', 'what the decision approves, in a sentence')
    .option('--evidence <text>', 'the evidence: the message or minutes the decision came from')
    .option('--evidence-file <file>', 'read the evidence from a file')
    .option('--commit', 'commit the note')
    .action(async (options: NoteOptions) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      const evidence = options.evidenceFile ? readFileSync(options.evidenceFile, 'utf8') : options.evidence;
      if (!evidence?.trim()) throw new ErrataError('USAGE', 'a note needs its evidence', { hint: 'Give --evidence TEXT or --evidence-file FILE (the e-mail or minutes the decision is recorded in).' });
      const people = await loadPeople(new WorkingTree(root));
      if (!people.some((p) => p.id === options.approver)) {
        throw new ErrataError('NOTE_INVALID', `no person "${options.approver}" in people.yaml`, {
          hint: `Known approvers: ${people.map((p) => p.id).join(', ') || '(none yet: add them to people.yaml)'}.`,
        });
      }
      const date = options.date ?? new Date().toISOString().slice(0, 10);
      const { file, text } = composeNote({ id: options.id, approver: options.approver, role: options.role, date, approves: options.approves, evidence });
      const full = path.join(root, file);
      if (existsSync(full)) throw new ErrataError('NOTE_INVALID', `${file} already exists`, { hint: 'Notes are append-only: choose a new id for a new decision.', data: { file } });
      writeFileAtomically(full, text);
      output.out(`wrote ${file}`);
      if (options.commit) {
        const author = await commitAuthor(root);
        if (!author) throw new ErrataError('GIT', 'no author to commit as', { hint: 'Set git config user.name and user.email, or commit the file yourself.' });
        const oid = await commitPaths(root, [file], `Record ${options.id}: ${options.approves.split('\n')[0]}\n\nErrata-Approval: ${options.id}\nErrata-Approver: ${options.approver}\n`, author);
        output.out(`committed ${oid.slice(0, 7)}`);
      }
    });
}
