import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { errata, makeProject, removeDir } from '../helpers/project.js';

const RAW = 'id,height_cm,site\n1,170.2,north\n2,65,harbour\n3,66.5,harbour\n4,181,north\n';

describe('errata note add and errata fix', () => {
  let root: string;
  const env = { GIT_AUTHOR_NAME: 'Ines Mbeki', GIT_AUTHOR_EMAIL: 'ines@example.org' };
  beforeAll(async () => {
    root = await makeProject({
      'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits\n    key: id\n',
      'people.yaml': 'people:\n  - id: rkovac\n    name: Renata Kovac\n    approves:\n      - table: visits\n        columns: all\n',
      'raw/visits/d.csv': RAW,
    });
  });
  afterAll(() => removeDir(root));

  it('refuses a fix whose approval note does not exist yet', async () => {
    const result = await errata(root, ['fix', 'visits', '--set', 'height_cm=height_cm * 2.54', '--reason', 'inches', '--approval', 'N-0001']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('no approval note N-0001');
    expect(existsSync(path.join(root, 'corrections'))).toBe(false);
  });

  it('writes a note, then a correction with a preview of the cells it changes, each committed', async () => {
    const note = await errata(root, ['note', 'add', '--id', 'N-0001', '--approver', 'rkovac', '--date', '2026-01-05', '--approves', 'harbour heights are inches', '--evidence', 'Minutes of 5 January 2026.', '--commit'], env);
    expect(note.code).toBe(0);
    expect(readFileSync(path.join(root, 'notes/N-0001.md'), 'utf8')).toContain('approver: rkovac');
    const fix = await errata(root, ['fix', 'visits', '--set', 'height_cm=round(height_cm * 2.54, 1)', '--where', "site = 'harbour'", '--reason', 'Harbour heights were entered in inches', '--approval', 'N-0001', '--commit'], env);
    expect(fix.stderr).toBe('');
    expect(fix.code).toBe(0);
    // By hand: 65 × 2.54 = 165.1 and 66.5 × 2.54 = 168.91 → 168.9 (inch = 2.54 cm exactly, NIST SP 811).
    expect(fix.stdout).toContain('wrote corrections/visits/0001-harbour-heights-were-entered-in.yaml');
    expect(fix.stdout).toContain('it changes 2 cells: height_cm 2');
    expect(fix.stdout).toContain('id=2  height_cm: 65 → 165.1');
    expect(fix.stdout).toContain('id=3  height_cm: 66.5 → 168.9');
    const message = execFileSync('git', ['log', '-1', '--format=%an%n%B'], { cwd: root, encoding: 'utf8' });
    expect(message).toContain('Ines Mbeki');
    expect(message).toContain('Errata-Reason: Harbour heights were entered in inches');
    expect(message).toContain('Errata-Approval: N-0001');
    // The review of the two commits passes: the note precedes the correction and Renata may approve.
    const review = await errata(root, ['review', 'HEAD~2..HEAD', '--format', 'json']);
    const result = JSON.parse(review.stdout);
    expect(result.findings.filter((f: { severity: string }) => f.severity === 'error')).toEqual([]);
    expect(result.cellsByCorrection).toBe(2);
  });

  it('numbers the next correction after the highest one and removes a correction that fails to build', async () => {
    const bad = await errata(root, ['fix', 'visits', '--set', 'height_cm=no_such_column + 1', '--reason', 'broken', '--approval', 'N-0001']);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('0002-broken.yaml');
    expect(existsSync(path.join(root, 'corrections/visits/0002-broken.yaml'))).toBe(false);
  });

  it('refuses to write over an existing note', async () => {
    const again = await errata(root, ['note', 'add', '--id', 'N-0001', '--approver', 'rkovac', '--approves', 'x', '--evidence', 'y']);
    expect(again.code).toBe(2);
    expect(again.stderr).toContain('already exists');
  });
});
