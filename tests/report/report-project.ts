import { commit, makeProject, writeFiles } from '../helpers/project.js';

/**
 * A small invented project for the report tests: 40 visits at three sites, weights of which every
 * tenth was entered in pounds, a site spelled in lower case, and free-text comments of which two hold
 * markup (a cell is untrusted data: the report must show it as text and run nothing).
 */

export const SCRIPT_CELL = '<script>window.__pwned=1</script>';
export const IMG_CELL = '<img src=x onerror="window.__pwned=2">';
export const CLOSING_CELL = '</script><!-- still text';

const SITES = ['Northmoor', 'Eastfold', 'Harbourside'];

/** Raw weight of visit i: 50 to 90.2 kg, every tenth visit written in pounds (≥ 110). */
export function rawWeight(i: number): number {
  const kg = 50 + ((i * 37) % 41) + (i % 3) / 10;
  return i % 10 === 0 ? Math.round(kg * 2.2046 * 10) / 10 : kg;
}

export const ROWS = 40;

export function rawCsv(): string {
  const lines = ['pid,site,weight_kg,comment'];
  for (let i = 1; i <= ROWS; i += 1) {
    const site = i === 5 ? 'eastfold' : SITES[i % 3];
    const comment = i === 7 ? SCRIPT_CELL : i === 9 ? 'checked' : i % 4 === 0 ? 'repeat visit' : 'ok';
    lines.push(`${i},${site},${rawWeight(i)},${comment}`);
  }
  return lines.join('\n') + '\n';
}

const CODEBOOK = `primaryKey: pid
fields:
  - { name: pid, type: integer }
  - { name: site, type: string, constraints: { enum: [Northmoor, Eastfold, Harbourside] } }
  - { name: weight_kg, type: number, constraints: { minimum: 30, maximum: 100 } }
  - { name: comment, type: string }
`;

const PEOPLE = `people:
  - id: imarsh
    name: Ilse Marsh
    role: principal investigator
    approves:
      - table: visits
        columns: all
`;

const NOTE = `---
id: N-0001
approver: imarsh
role: principal investigator
date: 2026-01-01
approves: pounds to kilograms; the site spelling; two comments re-entered from the forms
---
Minutes of the study meeting: "Weights over 100 are pounds. <b>Convert</b> them."
`;

const CORRECTION = `reason: Weights over 100 were entered in pounds; convert to kilograms
approval: N-0001
steps:
  - set: { weight_kg: "round(weight_kg / 2.2046, 1)" }
    where: weight_kg > 100
  - edit:
      - { key: 5, column: site, from: eastfold, to: Eastfold }
      - { key: 7, column: comment, from: '${SCRIPT_CELL}', to: '${IMG_CELL}' }
      - { key: 9, column: comment, from: checked, to: '${CLOSING_CELL}' }
`;

/** The project with two commits: the delivery, then the note and the correction. */
export async function makeReportProject(): Promise<string> {
  const root = await makeProject({
    'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n',
    'people.yaml': PEOPLE,
    'raw/visits/2026-01-01-delivery.csv': rawCsv(),
    'codebook/visits.yaml': CODEBOOK,
  });
  writeFiles(root, { 'notes/N-0001.md': NOTE, 'corrections/visits/0001-pounds-and-comments.yaml': CORRECTION });
  await commit(root, 'Convert pounds; fix a site spelling and two comments');
  return root;
}
