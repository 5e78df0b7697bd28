import { describe, expect, it } from 'vitest';
import { splitRange } from '../../src/git/range.js';

// git's own reading of BASE..HEAD (gitrevisions(7)): either side may be left out and then means HEAD.
describe('splitRange', () => {
  it('splits BASE..HEAD and BASE...HEAD, an empty side meaning HEAD', () => {
    expect(splitRange('main..fix', 'x')).toEqual({ base: 'main', head: 'fix' });
    expect(splitRange('main...fix', 'x')).toEqual({ base: 'main', head: 'fix' });
    expect(splitRange('main..', 'x')).toEqual({ base: 'main', head: 'HEAD' });
    expect(splitRange('..fix', 'x')).toEqual({ base: 'HEAD', head: 'fix' });
  });

  it('is null for a single revision and a usage error for more than two sides', () => {
    expect(splitRange('HEAD~2', 'x')).toBeNull();
    expect(() => splitRange('a..b..c', 'errata diff main..HEAD')).toThrow(expect.objectContaining({ code: 'USAGE', hint: 'For example: errata diff main..HEAD' }));
  });
});
