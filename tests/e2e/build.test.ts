import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { commit, errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

const RAW = [
  'pid,age,height_cm,weight_kg,smoker,site',
  '1,34,170.2,70.5,1,007',
  '2,99,65,7.12,2,012',
  '3,41,180,80,9,007',
  '4,200,160,60,1,031',
  '5,52,66,81.5,2,012',
].join('\n') + '\n';

const CONFIG = 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n';

const PEOPLE = `people:
  - id: rkovac
    name: Renata Kovac
    role: principal investigator
    approves:
      - table: visits
        columns: all
`;

const NOTE = `---
id: N-0001
approver: rkovac
role: principal investigator
date: 2026-01-03
approves: heights under 90 are inches; participant 2's weight is 71.2 kg
---
E-mail of 2026-01-03: "Yes, the harbour clinic entered inches. The 7.12 is a slipped decimal."
`;

const CORRECTION = `reason: Heights under 90 were entered in inches at one clinic
approval: N-0001
steps:
  - set: { height_cm: "round(height_cm * 2.54, 1)" }
    where: height_cm < 90
  - edit:
      - { key: 2, column: weight_kg, from: 7.12, to: 71.2 }
`;

const SENTINEL = `reason: 99 in age means not asked
approval: N-0001
steps:
  - missing: { column: age, values: [99] }
  - delete: { where: "age > 150", reason: "impossible age, a test record" }
`;

const files = {
  'errata.yaml': CONFIG,
  'people.yaml': PEOPLE,
  'raw/visits/2026-01-02-delivery.csv': RAW,
  'notes/N-0001.md': NOTE,
};

function sha256(file: string): string {
  return createHash('sha256').update(readFileSync(file)).digest('hex');
}

function outputsOf(root: string): Record<string, string> {
  const dir = path.join(root, 'clean');
  return Object.fromEntries(readdirSync(dir).filter((f) => !f.startsWith('.')).sort().map((f) => [f, sha256(path.join(dir, f))]));
}

describe('errata build on a small project', () => {
  let root: string;
  beforeAll(async () => {
    root = await makeProject(files);
    writeFiles(root, { 'corrections/visits/0001-inches.yaml': CORRECTION });
    await commit(root, 'Convert inch heights; fix a decimal slip');
    writeFileSync(path.join(root, 'corrections/visits/0002-age-sentinel.yaml'), SENTINEL);
    await commit(root, 'Age 99 is missing; drop the test record');
  });
  afterAll(() => removeDir(root));

  it('build writes the clean table computed by hand from raw plus corrections', async () => {
    const result = await errata(root, ['build']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    // By hand: 65 in * 2.54 = 165.1 cm; 66 in * 2.54 = 167.64 → 167.6 (inch = 2.54 cm exactly, NIST SP 811).
    // Row 2: age 99 → missing, weight 7.12 → 71.2. Row 4 (age 200) deleted. Site codes keep their zeros.
    expect(readFileSync(path.join(root, 'clean/visits.csv'), 'utf8')).toBe(
      [
        'pid,age,height_cm,weight_kg,smoker,site',
        '1,34,170.2,70.5,1,007',
        '2,,165.1,71.2,2,012',
        '3,41,180,80,9,007',
        '5,52,167.6,81.5,2,012',
      ].join('\n') + '\n',
    );
  });

  it('build twice and on a fresh clone gives identical bytes', async () => {
    await errata(root, ['build']);
    const first = outputsOf(root);
    await errata(root, ['build']);
    expect(outputsOf(root)).toEqual(first);
    const clone = tempDir();
    try {
      execFileSync('git', ['clone', '-q', root, path.join(clone, 'c')]);
      const result = await errata(path.join(clone, 'c'), ['build']);
      expect(result.code).toBe(0);
      expect(outputsOf(path.join(clone, 'c'))).toEqual(first);
    } finally {
      removeDir(clone);
    }
  });

  it('the manifest records input blob ids that git itself computes', async () => {
    await errata(root, ['build']);
    const manifest = JSON.parse(readFileSync(path.join(root, 'clean/manifest.json'), 'utf8'));
    const blob = execFileSync('git', ['hash-object', 'raw/visits/2026-01-02-delivery.csv'], { cwd: root, encoding: 'utf8' }).trim();
    expect(manifest.tables.visits.inputs).toEqual([{ path: 'raw/visits/2026-01-02-delivery.csv', blob }]);
    expect(manifest.tables.visits.sources.map((s: { path: string }) => s.path)).toEqual([
      'corrections/visits/0001-inches.yaml',
      'corrections/visits/0002-age-sentinel.yaml',
    ]);
    expect(manifest.tables.visits.outputs.data.sha256).toBe(sha256(path.join(root, 'clean/visits.csv')));
    expect(manifest.tables.visits.outputs.data.rows).toBe(4);
  });

  it('verify passes on a fresh build and names the line of a hand edit', async () => {
    await errata(root, ['build']);
    expect((await errata(root, ['verify'])).code).toBe(0);
    const file = path.join(root, 'clean/visits.csv');
    const original = readFileSync(file, 'utf8');
    writeFileSync(file, original.replace('1,34,170.2', '1,35,170.2'));
    const result = await errata(root, ['verify']);
    expect(result.code).toBe(1);
    expect(result.stdout).toContain('clean/visits.csv:2');
    writeFileSync(file, original);
  });

  it('verify --rev checks the outputs committed at a revision', async () => {
    await errata(root, ['build']);
    await commit(root, 'Build clean data');
    expect((await errata(root, ['verify', '--rev', 'HEAD'])).code).toBe(0);
    // The commit before holds no clean outputs at all.
    const before = await errata(root, ['verify', '--rev', 'HEAD~1']);
    expect(before.code).toBe(1);
    expect(before.stdout).toContain('clean/visits.csv: missing');
  });

  it('why tells the raw value, each change with its reason and approval, and the clean value', async () => {
    const result = await errata(root, ['why', 'visits', '2', 'height_cm']);
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/raw:\s+65\b/);
    expect(result.stdout).toContain('0001-inches.yaml step 1');
    expect(result.stdout).toContain('Heights under 90 were entered in inches');
    expect(result.stdout).toContain('N-0001 — Renata Kovac (principal investigator), 2026-01-03');
    expect(result.stdout).toMatch(/clean:\s+165\.1/);
    const json = JSON.parse((await errata(root, ['why', 'visits', '4', 'age', '--format', 'json'])).stdout);
    expect(json.raw.value).toBe('200');
    expect(json.clean.rowFound).toBe(false);
    expect(json.events.map((e: { change: string }) => e.change)).toEqual(['row-deleted']);
  });

  it('log lists each correction with its commit date, approval and cells changed per column', async () => {
    const json = JSON.parse((await errata(root, ['log', '--format', 'json'])).stdout);
    expect(json.corrections).toHaveLength(2);
    const [inches, sentinel] = json.corrections;
    // Rows 2 and 5 have heights under 90; one weight edit.
    expect(inches.cellsByColumn).toEqual({ height_cm: 2, weight_kg: 1 });
    expect(sentinel.cellsByColumn).toEqual({ age: 1 });
    expect(sentinel.rowsDeleted).toBe(1);
    expect(inches.approver).toBe('rkovac');
    // The helper commits a day apart from 2026-01-01T00:00:00Z (epoch 1767225600).
    expect(Date.parse(inches.date)).toBeGreaterThan(Date.parse('2026-01-01T00:00:00Z'));
    expect(Date.parse(sentinel.date)).toBeGreaterThan(Date.parse(inches.date));
    const csv = (await errata(root, ['log', '--format', 'csv'])).stdout.trim().split('\n');
    expect(csv[0]).toBe('table,correction,file,commit,date,author,reason,approval,approver,approved_on,column,cells_changed');
    expect(csv).toHaveLength(1 + 2 + 2);
    const markdown = (await errata(root, ['log', '--format', 'markdown'])).stdout;
    expect(markdown).toContain('| `corrections/visits/0001-inches.yaml` |');
  });
});

describe('conflicts', () => {
  it('build reports a conflict with the cell and both values and writes nothing', async () => {
    const root = await makeProject({
      ...files,
      'corrections/visits/0001-weight.yaml': `reason: slipped decimal\napproval: N-0001\nsteps:\n  - edit:\n      - { key: 3, column: weight_kg, from: 8.0, to: 80 }\n`,
    });
    try {
      const result = await errata(root, ['build']);
      expect(result.code).toBe(1);
      expect(result.stderr).toContain('corrections/visits/0001-weight.yaml:5: (3, weight_kg) expected 8.0, found 80');
      expect(existsSync(path.join(root, 'clean/visits.csv'))).toBe(false);
      const allowed = await errata(root, ['build', '--allow-conflicts']);
      expect(allowed.code).toBe(1);
      expect(allowed.stderr).toContain('1 conflict');
      expect(existsSync(path.join(root, 'clean/visits.csv'))).toBe(true);
    } finally {
      removeDir(root);
    }
  });
});

describe('interrupted builds', () => {
  it('a build killed at any point leaves every output wholly old or wholly new', async () => {
    const root = await makeProject({ ...files, 'corrections/visits/0001-inches.yaml': CORRECTION });
    try {
      writeFileSync(path.join(root, 'corrections/visits/0001-inches.yaml'), CORRECTION.replace('  - edit:\n      - { key: 2, column: weight_kg, from: 7.12, to: 71.2 }\n', ''));
      expect((await errata(root, ['build'])).code).toBe(0);
      const before = outputsOf(root);
      writeFileSync(path.join(root, 'corrections/visits/0001-inches.yaml'), CORRECTION);
      const points = ['staged-table', 'published-1', 'published-2'];
      const seen: Array<Record<string, string>> = [];
      for (const point of points) {
        const killed = await errata(root, ['build'], { ERRATA_FAULT: point });
        expect(killed.code).not.toBe(0);
        seen.push(outputsOf(root));
        // Restore the old outputs for the next point by rebuilding the old corrections.
        writeFileSync(path.join(root, 'corrections/visits/0001-inches.yaml'), CORRECTION.replace('  - edit:\n      - { key: 2, column: weight_kg, from: 7.12, to: 71.2 }\n', ''));
        await errata(root, ['build']);
        writeFileSync(path.join(root, 'corrections/visits/0001-inches.yaml'), CORRECTION);
      }
      expect((await errata(root, ['build'])).code).toBe(0);
      const after = outputsOf(root);
      expect(after['visits.csv']).not.toBe(before['visits.csv']);
      for (const snapshot of seen) {
        for (const [file, hash] of Object.entries(snapshot)) expect([before[file], after[file]]).toContain(hash);
      }
      // Killed before anything moved: all old. Killed after the first rename: the data is new, the rest old.
      expect(seen[0]).toEqual(before);
      expect(seen[1]['visits.csv']).toBe(after['visits.csv']);
      expect(seen[1]['manifest.json']).toBe(before['manifest.json']);
      // The next build cleared the staging folders the killed builds left.
      expect(readdirSync(path.join(root, '.errata/tmp')).filter((f) => f.startsWith('stage-'))).toEqual([]);
    } finally {
      removeDir(root);
    }
  });
});
