import { describe, expect, it } from 'vitest';
import { errata, REPO_ROOT } from '../helpers/project.js';

const COMMANDS = ['init', 'build', 'verify', 'why', 'log', 'diff', 'git-setup', 'review', 'fix', 'note', 'profile', 'check', 'codebook'];

describe('command line help', () => {
  it('lists every command in the top-level help', async () => {
    const result = await errata(REPO_ROOT, ['--help']);
    expect(result.code).toBe(0);
    for (const name of COMMANDS) expect(result.stdout).toMatch(new RegExp(`^\\s+${name}\\b`, 'm'));
  });

  it.each(COMMANDS)('renders help for %s', async (name) => {
    const result = await errata(REPO_ROOT, [name, '--help']);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain(`Usage: errata ${name}`);
  });

  it('exits 2 with a message on an unknown option', async () => {
    const result = await errata(REPO_ROOT, ['build', '--no-such-option']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('unknown option');
  });

  it('exits 2 naming the problem outside a project', async () => {
    const result = await errata('/', ['build']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('not inside a git repository');
  });
});
