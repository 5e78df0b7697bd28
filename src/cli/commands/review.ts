import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { mainBranch, mergeBase, resolveRevision } from '../../git/repo.js';
import { splitRange } from '../../git/range.js';
import { reviewRange } from '../../review/review-range.js';
import { renderReview, reviewPassed, type ReviewFormat } from '../../render/review.js';
import { reviewCache, tableCache } from '../build-session.js';
import { projectRoot, workDir } from '../context.js';
import { createOutput } from '../output.js';
import { formatOption } from '../options.js';

export function registerReview(program: Command, setExit: (code: number) => void): void {
  program
    .command('review')
    .description('check that every changed cell in a range traces to an approved correction or a new delivery, and that history rules hold (exit 1 on findings)')
    .argument('[range]', 'BASE..HEAD (default: from the merge base with the main branch to HEAD)')
    .addOption(formatOption(['text', 'markdown', 'json'], 'text'))
    .action(async (range: string | undefined, options: { format: ReviewFormat }) => {
      const output = createOutput(program.opts());
      const root = await projectRoot();
      const { base, head } = await resolveRange(root, range);
      const result = await reviewRange({
        root,
        base,
        head,
        workDir: workDir(root),
        cache: tableCache(root),
        reviewCache: reviewCache(root),
        onProgress: (e) => output.progress(e.phase === 'review' ? `reviewing ${e.step}…` : e.phase === 'load' ? `loading ${e.table}…` : `building ${e.table}…`),
      });
      output.endProgress();
      output.out(renderReview(result, options.format, output.color));
      if (!reviewPassed(result)) setExit(1);
    });
}

async function resolveRange(root: string, range: string | undefined): Promise<{ base: string; head: string }> {
  const split = range === undefined ? null : splitRange(range, 'errata review main..HEAD');
  if (split) return { base: await resolveRevision(root, split.base), head: await resolveRevision(root, split.head) };
  const head = await resolveRevision(root, range ?? 'HEAD');
  const main = await mainBranch(root);
  if (!main) {
    throw new ErrataError('USAGE', 'no main branch to review against', { hint: 'Give the range explicitly, e.g. errata review origin/main..HEAD.' });
  }
  const base = await mergeBase(root, await resolveRevision(root, main), head);
  if (!base) throw new ErrataError('USAGE', `HEAD shares no history with ${main}`, { hint: 'Give the range explicitly: errata review BASE..HEAD.' });
  return { base, head };
}
