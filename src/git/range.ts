import { ErrataError } from '../errors.js';

/**
 * `BASE..HEAD` (or `BASE...HEAD`) split into its two revisions, an empty side meaning HEAD; null
 * when `text` is not a range. `example` is the command line a usage error suggests instead.
 *
 * @example
 *   splitRange('main..', 'errata review main..HEAD') // { base: 'main', head: 'HEAD' }
 */
export function splitRange(text: string, example: string): { base: string; head: string } | null {
  if (!text.includes('..')) return null;
  const parts = text.split(/\.\.\.?/);
  if (parts.length !== 2) {
    throw new ErrataError('USAGE', `a range is BASE..HEAD, not "${text}"`, { hint: `For example: ${example}` });
  }
  return { base: parts[0] || 'HEAD', head: parts[1] || 'HEAD' };
}
