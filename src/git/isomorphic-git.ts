import { createRequire } from 'node:module';
import type * as IsomorphicGit from 'isomorphic-git';

/**
 * isomorphic-git, loaded through require: as an ES module import its start-up cost was twice as
 * high (0.12 s against 0.05 s), paid by every command.
 */
export const git = createRequire(import.meta.url)('isomorphic-git') as typeof IsomorphicGit;
