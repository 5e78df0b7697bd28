import { ErrataError } from '../errors.js';
import type { ProjectTree } from '../git/tree.js';
import { CORRECTION_NAME, parseCorrection } from './parse-correction.js';
import type { Correction } from './types.js';

/**
 * The corrections of one table, in the order they apply: by file name, whose four-digit number makes
 * that order explicit. Two files with one number are an error, since their order would be a guess.
 */
export async function loadCorrections(tree: ProjectTree, folder: string): Promise<Correction[]> {
  const files = (await tree.list(folder)).filter((f) => /\.ya?ml$/i.test(f));
  const byNumber = new Map<string, string>();
  const corrections: Correction[] = [];
  for (const file of files) {
    const name = file.slice(file.lastIndexOf('/') + 1);
    const match = CORRECTION_NAME.exec(name);
    if (!match) {
      throw new ErrataError('CORRECTION_NAME', `correction file name "${name}" is not NNNN-slug.yaml`, {
        hint: 'Name it with a four-digit number and a short lower-case slug, e.g. 0007-height-inches.yaml.',
        data: { file },
      });
    }
    const clash = byNumber.get(match[1]);
    if (clash) {
      throw new ErrataError('CORRECTION_NAME', `two corrections share the number ${match[1]}: ${clash} and ${file}`, {
        hint: 'Renumber the newer one to the next free number; the number fixes the order corrections apply in.',
        data: { file },
      });
    }
    byNumber.set(match[1], file);
    const content = await tree.read(file);
    corrections.push(parseCorrection(file, (content ?? Buffer.alloc(0)).toString('utf8')));
  }
  return corrections.sort((a, b) => (a.id < b.id ? -1 : 1));
}
