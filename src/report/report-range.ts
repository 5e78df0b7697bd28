import { ErrataError } from '../errors.js';
import { commitLog, mainBranch, mergeBase, pathHistory, resolveRevision } from '../git/repo.js';
import { splitRange } from '../git/range.js';
import type { ReportRange } from './types.js';

/**
 * The commits a report covers. Given `BASE..HEAD`, exactly those. Otherwise HEAD against:
 *
 * 1. its merge base with the main branch, when HEAD is ahead of it (a pull request's own changes, as
 *    `errata review` takes them);
 * 2. else the parent of the first commit that added a correction, so the diff shows every cell the
 *    corrections changed and the review covers every correction;
 * 3. else the first commit of the history.
 *
 * @example
 *   await reportRange(root, 'main..fix-heights') // { base: '3fa1…', head: '9c0e…', choice: 'given' }
 */
export async function reportRange(root: string, range?: string): Promise<ReportRange> {
  if (range !== undefined) {
    const split = splitRange(range, 'errata report --range main..HEAD');
    if (!split) throw new ErrataError('USAGE', `--range takes BASE..HEAD, not "${range}"`, { hint: 'For example: errata report --range main..HEAD' });
    return { base: await resolveRevision(root, split.base), head: await resolveRevision(root, split.head), choice: 'given' };
  }
  const head = await resolveRevision(root, 'HEAD');
  const main = await mainBranch(root);
  if (main) {
    const base = await mergeBase(root, await resolveRevision(root, main), head);
    if (base && base !== head) return { base, head, choice: 'merge-base' };
  }
  const added = [...(await pathHistory(root, ['corrections'], head))].filter(([file]) => /\.ya?ml$/.test(file)).map(([, h]) => h.added);
  const history = await commitLog(root, head);
  // commitLog lists newest first, so the first correction is the one with the highest index.
  const position = new Map(history.map((c, i) => [c.oid, i]));
  const first = added.sort((a, b) => position.get(b.oid)! - position.get(a.oid)!)[0];
  if (first?.parents[0]) return { base: first.parents[0], head, choice: 'first-correction' };
  return { base: history[history.length - 1]?.oid ?? head, head, choice: 'whole-history' };
}
