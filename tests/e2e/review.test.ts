import { execFileSync } from 'node:child_process';
import { readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { Finding } from '../../src/review/types.js';
import { commit, errata, makeProject, removeDir, writeFiles } from '../helpers/project.js';

/**
 * Each history below is built to break one review rule (or none). The expected findings follow from
 * what the history does, worked out by hand from these small invented files.
 */

const CONFIG = 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n';

const RAW_FILE = 'raw/visits/2026-01-01-delivery.csv';
const RAW = [
  'pid,site,height_cm,weight_kg,smoker',
  '1,Northmoor,170.2,70.5,1',
  '2,Harbourside,65,7.12,2',
  '3,Northmoor,180,80,9',
  '4,Harbourside,66,81.5,1',
  '5,Eastfold,158,55,2',
].join('\n') + '\n';

/** Renata Kovac may approve any column of visits; Tomas Lind only the smoker column. */
const PEOPLE = `people:
  - id: rkovac
    name: Renata Kovac
    role: principal investigator
    approves:
      - table: visits
        columns: all
  - id: tlind
    name: Tomas Lind
    role: study nurse
    approves:
      - table: visits
        columns: [smoker]
`;

function note(id: string, approver: string, date: string, approves: string, evidence = 'Minutes of the study meeting.'): string {
  return `---\nid: ${id}\napprover: ${approver}\nrole: study staff\ndate: ${date}\napproves: ${approves}\n---\n${evidence}\n`;
}

const NOTE_1_FILE = 'notes/N-0001.md';
const NOTE_1 = note('N-0001', 'rkovac', '2026-01-01', 'inch heights at Harbourside; participant 2 weight slip', 'E-mail: "Harbourside entered inches; 7.12 is 71.2."');

/**
 * By hand: participant 2 height 65 in → 165.1 cm, participant 4 height 66 in → 167.64 → 167.6 cm,
 * participant 2 weight 7.12 → 71.2. Three cells.
 */
const INCHES_FILE = 'corrections/visits/0001-inches.yaml';
const inches = (approval: string | null) => `reason: Heights under 90 were entered in inches at Harbourside
${approval ? `approval: ${approval}\n` : ''}steps:
  - set: { height_cm: "round(height_cm * 2.54, 1)" }
    where: height_cm < 90
  - edit:
      - { key: 2, column: weight_kg, from: 7.12, to: 71.2 }
`;

const BASE = { 'errata.yaml': CONFIG, 'people.yaml': PEOPLE, [RAW_FILE]: RAW };
/** A base on which the inch correction and its note are already approved and committed. */
const CORRECTED_BASE = { ...BASE, [NOTE_1_FILE]: NOTE_1, [INCHES_FILE]: inches('N-0001') };


interface Review {
  code: number;
  passed: boolean;
  base: string;
  head: string;
  commits: number;
  findings: Finding[];
  cellsChanged: number;
  cellsByCorrection: number;
  cellsByDelivery: number;
  correctionsReviewed: string[];
}

const roots: string[] = [];
afterAll(() => roots.forEach(removeDir));

async function project(files: Record<string, string>): Promise<{ root: string; base: string }> {
  const root = await makeProject(files);
  roots.push(root);
  return { root, base: git(root, 'rev-parse', 'HEAD') };
}

function git(root: string, ...args: string[]): string {
  return execFileSync('git', args, { cwd: root, encoding: 'utf8' }).trim();
}

async function review(root: string, range?: string): Promise<Review> {
  const result = await errata(root, ['review', ...(range ? [range] : []), '--format', 'json']);
  let json: Omit<Review, 'code'>;
  try {
    json = JSON.parse(result.stdout);
  } catch {
    throw new Error(`review exited ${result.code} without JSON:\n${result.stdout}\n${result.stderr}`);
  }
  return { code: result.code, ...json };
}

const rulesOf = (r: Review) => [...new Set(r.findings.map((f) => f.rule))].sort();
const errorsOf = (r: Review) => r.findings.filter((f) => f.severity === 'error');
const findingsOf = (r: Review, rule: string) => r.findings.filter((f) => f.rule === rule);

describe('errata review passes a compliant history', () => {
  it('a note and then a correction citing it pass, and every changed cell is counted for the correction', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, { [NOTE_1_FILE]: NOTE_1 });
    await commit(root, 'Approval for the inch heights');
    writeFiles(root, { [INCHES_FILE]: inches('N-0001') });
    const head = await commit(root, 'Convert inch heights');

    const r = await review(root, `${base}..${head}`);
    expect(r.code).toBe(0);
    expect(r.passed).toBe(true);
    expect(r.findings).toEqual([]);
    expect(r.base).toBe(base);
    expect(r.head).toBe(head);
    expect(r.commits).toBe(2);
    expect(r.cellsChanged).toBe(3);
    expect(r.cellsByCorrection).toBe(3);
    expect(r.cellsByDelivery).toBe(0);
    expect(r.correctionsReviewed).toEqual([INCHES_FILE]);
  });

  it('a repeated review of the same two commits is read back from .errata/cache/reviews', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, { [NOTE_1_FILE]: NOTE_1, [INCHES_FILE]: inches('N-0001') });
    const head = await commit(root, 'Convert inch heights');
    expect((await review(root, `${base}..${head}`)).cellsChanged).toBe(3);
    const dir = path.join(root, '.errata', 'cache', 'reviews');
    const entries = readdirSync(dir).filter((f) => f.endsWith('.json'));
    expect(entries).toHaveLength(1);
    // Prove the entry is what is read: change the answer it holds and see it come back.
    const file = path.join(dir, entries[0]);
    writeFileSync(file, JSON.stringify({ ...JSON.parse(readFileSync(file, 'utf8')), cellsChanged: 99 }));
    expect((await review(root, `${base}..${head}`)).cellsChanged).toBe(99);
    // An unreadable entry is computed again.
    writeFileSync(file, '{');
    expect((await review(root, `${base}..${head}`)).cellsChanged).toBe(3);
  });

  it('a column renamed by one correction and edited by a later one is explained by them', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, { [NOTE_1_FILE]: NOTE_1 });
    await commit(root, 'Approval for the renamed smoking column');
    writeFiles(root, {
      'corrections/visits/0001-rename.yaml': 'reason: The export named the smoking question smoker\napproval: N-0001\nsteps:\n  - rename: { smoker: smoking_status }\n',
      'corrections/visits/0002-unknown.yaml': 'reason: 9 means not known\napproval: N-0001\nsteps:\n  - missing: { columns: [smoking_status], values: [9] }\n',
    });
    const head = await commit(root, 'Rename the smoking column and mark 9 as not known');

    const r = await review(root, `${base}..${head}`);
    // By hand: smoker is removed and smoking_status added (a rename, recorded as a column event), and
    // participant 3's 9 becomes missing: every change traces to the two corrections.
    expect(r.findings).toEqual([]);
    expect(r.code).toBe(0);
  });
});

describe('errata review finds corrections without a valid approval', () => {
  let unapproved: { root: string; base: string; added: string };

  it('a correction with no approval is reported as correction-without-approval, naming the file and the commit', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, { [INCHES_FILE]: inches(null) });
    const added = await commit(root, 'Convert inch heights');
    unapproved = { root, base, added };

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(r.passed).toBe(false);
    expect(rulesOf(r)).toEqual(['correction-without-approval']);
    const [finding] = findingsOf(r, 'correction-without-approval');
    expect(finding).toMatchObject({ severity: 'error', table: 'visits', file: INCHES_FILE, correction: '0001-inches.yaml', commit: added });
  });

  it('the Markdown form starts with a summary line and lists the finding in a table', async () => {
    const { root, base } = unapproved;
    const result = await errata(root, ['review', `${base}..HEAD`, '--format', 'markdown']);
    expect(result.code).toBe(1);
    const lines = result.stdout.split('\n');
    expect(lines[0]).toMatch(/^\*\*errata review:\*\* .*failed/);
    expect(lines[0]).toContain(`${base.slice(0, 7)}..${unapproved.added.slice(0, 7)}`);
    const header = lines.findIndex((l) => /^\|.*Rule.*\|/.test(l));
    expect(header).toBeGreaterThan(0);
    expect(lines[header + 1]).toMatch(/^\|(-+\|)+$/);
    const row = lines.slice(header + 2).find((l) => l.includes('correction-without-approval'));
    expect(row).toBeDefined();
    expect(row).toContain(INCHES_FILE);
  });

  it('the text form names the rule and the file', async () => {
    const { root, base } = unapproved;
    const result = await errata(root, ['review', `${base}..HEAD`]);
    expect(result.code).toBe(1);
    expect(result.stdout).toContain('correction-without-approval');
    expect(result.stdout).toContain(INCHES_FILE);
  });

  it('a correction citing a note that does not exist is reported as note-not-found', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, { [NOTE_1_FILE]: NOTE_1, [INCHES_FILE]: inches('N-0404') });
    const added = await commit(root, 'Convert inch heights');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['note-not-found']);
    expect(findingsOf(r, 'note-not-found')[0]).toMatchObject({ severity: 'error', file: INCHES_FILE, correction: '0001-inches.yaml', commit: added });
  });

  it('a note whose approver is not in people.yaml is reported as approver-unknown', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, {
      'notes/N-0002.md': note('N-0002', 'mholm', '2026-01-01', 'inch heights'),
      [INCHES_FILE]: inches('N-0002'),
    });
    await commit(root, 'Convert inch heights');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['approver-unknown']);
    expect(findingsOf(r, 'approver-unknown')[0]).toMatchObject({ file: INCHES_FILE });
  });

  it('an approver with authority over the smoker column only may not approve a change to height_cm', async () => {
    const { root, base } = await project(BASE);
    // Changes smoker (Tomas Lind may approve) and height_cm (he may not).
    writeFiles(root, {
      'notes/N-0002.md': note('N-0002', 'tlind', '2026-01-01', 'smoking code 9 is not asked; inch heights'),
      'corrections/visits/0001-smoker-and-height.yaml': `reason: Code 9 means not asked; inch heights
approval: N-0002
steps:
  - missing: { columns: [smoker], values: [9] }
  - set: { height_cm: "round(height_cm * 2.54, 1)" }
    where: height_cm < 90
`,
    });
    await commit(root, 'Smoking code and inch heights');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['approver-without-authority']);
    const findings = findingsOf(r, 'approver-without-authority');
    expect(findings).toHaveLength(1);
    expect(findings[0]).toMatchObject({ table: 'visits', column: 'height_cm', file: 'corrections/visits/0001-smoker-and-height.yaml' });
  });

  it('deleting rows needs authority over every column: a smoker-only approver is refused, a whole-table approver is not', async () => {
    const { root, base } = await project(BASE);
    writeFiles(root, {
      'notes/N-0001.md': NOTE_1,
      'notes/N-0002.md': note('N-0002', 'tlind', '2026-01-01', 'drop the participant with smoking code 9'),
      'corrections/visits/0001-drop-code-9.yaml': 'reason: a test record\napproval: N-0002\nsteps:\n  - delete: { where: "smoker = 9", reason: "test record" }\n',
      'corrections/visits/0002-withdrawn.yaml': 'reason: consent withdrawn\napproval: N-0001\nsteps:\n  - delete: { where: "pid = 5", reason: "consent withdrawn" }\n',
    });
    await commit(root, 'Remove two participants');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['approver-without-authority']);
    const findings = findingsOf(r, 'approver-without-authority');
    expect(findings).toHaveLength(1);
    expect(findings[0]).toMatchObject({ correction: '0001-drop-code-9.yaml', file: 'corrections/visits/0001-drop-code-9.yaml' });
    expect(findings[0].column).toMatch(/row/);
    // Both removed rows are explained by the corrections that delete them.
    expect(r.cellsChanged).toBe(2);
    expect(r.cellsByCorrection).toBe(2);
  });

  it('a note dated a month after the commit that added the correction is reported as note-dated-after-commit', async () => {
    const { root, base } = await project(BASE);
    // The next commit is one day after HEAD; the note is dated 31 days after that commit.
    const headTime = Number(git(root, 'show', '-s', '--format=%at', 'HEAD'));
    const noteDate = new Date((headTime + 86_400 * 32) * 1000).toISOString().slice(0, 10);
    writeFiles(root, { 'notes/N-0002.md': note('N-0002', 'rkovac', noteDate, 'inch heights'), [INCHES_FILE]: inches('N-0002') });
    const added = await commit(root, 'Convert inch heights');
    const committedOn = git(root, 'show', '-s', '--format=%ad', '--date=short', added);
    expect(noteDate > committedOn).toBe(true);

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['note-dated-after-commit']);
    expect(findingsOf(r, 'note-dated-after-commit')[0]).toMatchObject({ file: INCHES_FILE, commit: added });
  });
});

describe('errata review keeps raw deliveries, notes and base corrections append-only', () => {
  it('a raw delivery edited in place is reported as raw-modified, naming the file and the commit', async () => {
    const { root, base } = await project(BASE);
    writeFileSync(path.join(root, RAW_FILE), RAW.replace('5,Eastfold,158,55,2', '5,Eastfold,158,56,2'));
    const edited = await commit(root, 'Fix a weight in the delivery');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(findingsOf(r, 'raw-modified')).toEqual([expect.objectContaining({ severity: 'error', file: RAW_FILE, commit: edited })]);
  });

  it('a deleted raw delivery is reported as raw-deleted, naming the file and the commit', async () => {
    const older = 'raw/visits/2025-12-01-delivery.csv';
    const { root, base } = await project({ ...BASE, [older]: RAW.replace('1,Northmoor,170.2,70.5,1\n', '') });
    rmSync(path.join(root, older));
    const deleted = await commit(root, 'Tidy old deliveries');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['raw-deleted']);
    expect(findingsOf(r, 'raw-deleted')).toEqual([expect.objectContaining({ severity: 'error', file: older, commit: deleted })]);
  });

  it('a modified note is reported as note-modified and a deleted note as note-deleted, each with its commit', async () => {
    const { root, base } = await project({ ...BASE, [NOTE_1_FILE]: NOTE_1, 'notes/N-0002.md': note('N-0002', 'tlind', '2026-01-01', 'smoking codes') });
    writeFileSync(path.join(root, NOTE_1_FILE), NOTE_1.replace('71.2', '72.1'));
    const modified = await commit(root, 'Reword a note');
    rmSync(path.join(root, 'notes/N-0002.md'));
    const deleted = await commit(root, 'Remove a note');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['note-deleted', 'note-modified']);
    expect(findingsOf(r, 'note-modified')).toEqual([expect.objectContaining({ file: NOTE_1_FILE, commit: modified })]);
    expect(findingsOf(r, 'note-deleted')).toEqual([expect.objectContaining({ file: 'notes/N-0002.md', commit: deleted })]);
  });

  it('a correction from the base branch edited in place is reported as correction-edited', async () => {
    const { root, base } = await project(CORRECTED_BASE);
    // Only the reason is reworded: no cell changes.
    writeFileSync(path.join(root, INCHES_FILE), inches('N-0001').replace('entered in inches', 'recorded in inches'));
    const edited = await commit(root, 'Reword the reason');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['correction-edited']);
    expect(findingsOf(r, 'correction-edited')).toEqual([expect.objectContaining({ file: INCHES_FILE, commit: edited })]);
    expect(r.cellsChanged).toBe(0);
  });

  it('a base correction edited in place to change a cell is still reported as correction-edited', async () => {
    const { root, base } = await project(CORRECTED_BASE);
    writeFileSync(path.join(root, INCHES_FILE), inches('N-0001').replace('to: 71.2', 'to: 72.1'));
    const edited = await commit(root, 'Change the corrected weight');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(findingsOf(r, 'correction-edited')).toEqual([expect.objectContaining({ file: INCHES_FILE, commit: edited })]);
    // Participant 2's weight goes from 71.2 to 72.1; nothing else changes.
    expect(r.cellsChanged).toBe(1);
  });

  it('a deleted base correction is reported, and each cell it had changed is a change without a correction', async () => {
    const { root, base } = await project(CORRECTED_BASE);
    rmSync(path.join(root, INCHES_FILE));
    const deleted = await commit(root, 'Remove the inch correction');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['change-without-correction', 'correction-deleted']);
    expect(findingsOf(r, 'correction-deleted')).toEqual([expect.objectContaining({ file: INCHES_FILE, commit: deleted })]);
    // The three cells the correction had changed return to their raw values with nothing explaining it.
    const cells = findingsOf(r, 'change-without-correction').map((f) => `${f.table} ${f.key} ${f.column}`).sort();
    expect(cells).toEqual(['visits 2 height_cm', 'visits 2 weight_kg', 'visits 4 height_cm']);
    expect(r.cellsChanged).toBe(3);
    expect(r.cellsByCorrection).toBe(0);
    expect(r.cellsByDelivery).toBe(0);
  });
});

describe('errata review checks committed outputs and new deliveries', () => {
  it('a hand edit to a committed clean file is reported as clean-differs-from-rebuild, naming the file', async () => {
    const { root } = await project(CORRECTED_BASE);
    const build = await errata(root, ['build']);
    expect(build.code).toBe(0);
    const built = await commit(root, 'Build clean data');
    const file = path.join(root, 'clean/visits.csv');
    const clean = readFileSync(file, 'utf8');
    expect(clean).toContain('1,Northmoor,170.2,70.5,1');
    writeFileSync(file, clean.replace('1,Northmoor,170.2,70.5,1', '1,Northmoor,170.2,75.5,1'));
    const edited = await commit(root, 'Adjust a weight');

    const r = await review(root, `${built}..${edited}`);
    expect(r.code).toBe(1);
    expect(rulesOf(r)).toEqual(['clean-differs-from-rebuild']);
    expect(findingsOf(r, 'clean-differs-from-rebuild')).toEqual([expect.objectContaining({ severity: 'error', file: 'clean/visits.csv', commit: edited })]);
  });

  it('a new delivery explains the cells it changes, and base corrections re-apply to it', async () => {
    const { root, base } = await project(CORRECTED_BASE);
    // Participant 1 smoker 1 → 2, participant 5 weight 55 → 56.5, participant 2 height 65 → 64 inches,
    // which the inch correction turns into 162.56 → 162.6 cm (was 165.1). Three clean cells differ.
    const second = RAW.replace('1,Northmoor,170.2,70.5,1', '1,Northmoor,170.2,70.5,2')
      .replace('5,Eastfold,158,55,2', '5,Eastfold,158,56.5,2')
      .replace('2,Harbourside,65,7.12,2', '2,Harbourside,64,7.12,2');
    writeFiles(root, { 'raw/visits/2026-02-01-delivery.csv': second });
    await commit(root, 'February delivery');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(0);
    expect(r.findings).toEqual([]);
    expect(r.cellsChanged).toBe(3);
    expect(r.cellsByDelivery).toBe(3);
    expect(r.cellsByCorrection).toBe(0);
    expect(r.correctionsReviewed).toEqual([]);
  });

  it('a new delivery that changes a cell a base guarded edit was decided on is a guarded-edit-conflict', async () => {
    const { root, base } = await project(CORRECTED_BASE);
    // The site now delivers 71.9 for participant 2's weight; the edit expected 7.12.
    writeFiles(root, { 'raw/visits/2026-02-01-delivery.csv': RAW.replace('2,Harbourside,65,7.12,2', '2,Harbourside,65,71.9,2') });
    await commit(root, 'February delivery');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(1);
    expect(errorsOf(r).map((f) => f.rule)).toEqual(['guarded-edit-conflict']);
    expect(findingsOf(r, 'guarded-edit-conflict')[0]).toMatchObject({ table: 'visits', key: '2', column: 'weight_kg', file: INCHES_FILE });
  });

  it('a correction that changes no cell is only a warning, and the review passes', async () => {
    const { root, base } = await project({ ...BASE, [NOTE_1_FILE]: NOTE_1 });
    writeFiles(root, {
      'corrections/visits/0001-giants.yaml': 'reason: heights over 250 are typing slips\napproval: N-0001\nsteps:\n  - set: { height_cm: "height_cm / 10" }\n    where: height_cm > 250\n',
    });
    const added = await commit(root, 'Guard against giant heights');

    const r = await review(root, `${base}..HEAD`);
    expect(r.code).toBe(0);
    expect(r.passed).toBe(true);
    expect(r.findings).toEqual([expect.objectContaining({ rule: 'correction-changes-nothing', severity: 'warning', file: 'corrections/visits/0001-giants.yaml', commit: added })]);
    expect(r.cellsChanged).toBe(0);
  });
});

describe('errata review without a range', () => {
  it('on a feature branch it reviews from the merge base with main to HEAD', async () => {
    const { root, base } = await project(BASE);
    git(root, 'checkout', '-q', '-b', 'fix-heights');
    writeFiles(root, { [NOTE_1_FILE]: NOTE_1 });
    await commit(root, 'Approval for the inch heights');
    writeFiles(root, { [INCHES_FILE]: inches('N-0001') });
    const head = await commit(root, 'Convert inch heights');
    // main moves on after the branch was made; its new commit is not part of the review.
    git(root, 'checkout', '-q', 'main');
    writeFiles(root, { 'notes/N-0009.md': note('N-0009', 'rkovac', '2026-01-01', 'site names') });
    const mainTip = await commit(root, 'A note on main');
    git(root, 'checkout', '-q', 'fix-heights');

    const r = await review(root);
    expect(r.code).toBe(0);
    expect(r.base).toBe(base);
    expect(r.base).not.toBe(mainTip);
    expect(r.head).toBe(head);
    expect(r.commits).toBe(2);
    expect(r.correctionsReviewed).toEqual([INCHES_FILE]);
    expect(r.cellsByCorrection).toBe(3);
    expect(r.findings).toEqual([]);
  });
});
