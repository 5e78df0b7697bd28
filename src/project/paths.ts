import { ErrataError } from '../errors.js';

/**
 * A path written in a project file must stay inside the repository: relative, no `..` segment, no
 * drive letter or backslash tricks. Returns it normalised to forward slashes without a trailing slash.
 */
export function repoRelativePath(value: string, where: { file: string; line?: number; field: string }): string {
  const trimmed = value.trim();
  const bad =
    trimmed === '' ||
    trimmed.startsWith('/') ||
    trimmed.startsWith('~') ||
    /^[a-zA-Z]:/.test(trimmed) ||
    trimmed.includes('\\') ||
    trimmed.includes('\0') ||
    trimmed.split('/').some((part) => part === '..');
  if (bad) {
    throw new ErrataError('PATH_OUTSIDE', `${where.field} "${value}" must be a path inside the repository`, {
      hint: 'Write a relative path such as raw/visits/ with no "..", no leading "/" and no backslashes.',
      data: { file: where.file, line: where.line },
    });
  }
  return trimmed.replace(/^\.\//, '').replace(/\/+$/, '');
}
