import type * as IsomorphicGit from 'isomorphic-git';
import { onFirstUse } from '../lazy-module.js';

const isomorphicGit = onFirstUse<typeof IsomorphicGit>('isomorphic-git');

/** isomorphic-git, loaded on first use: commands that never read git do not pay for it. */
export const git = new Proxy({} as typeof IsomorphicGit, {
  get(_target, name) {
    return isomorphicGit()[name as keyof typeof IsomorphicGit];
  },
});
