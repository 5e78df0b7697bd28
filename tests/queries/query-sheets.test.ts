import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseCorrection } from '../../src/corrections/parse-correction.js';
import { parseNote } from '../../src/project/notes.js';
import { queryId } from '../../src/queries/query-sheet.js';
import { commit, errata, makeProject, removeDir } from '../helpers/project.js';

/**
 * Query sheets end to end: export the open discrepancies, answer them as the researcher would (in a
 * CSV edited as text, then in an .xlsx workbook written with ExcelJS, a library independent of the
 * export code path's output), import, and check the notes, the drafts and the rebuilt data.
 * The discrepancies expected are worked by hand from the Frictionless Table Schema meaning of each
 * constraint (minimum, maximum, enum) and the rule dbp < sbp.
 */

const RAW = [
  'pid,age,sex,weight_kg,sbp,dbp,site',
  '1,34,1,71.2,120,80,north',
  '2,999,2,68,110,70,south',
  '3,41,3,80,130,90,north',
  '4,52,1,7.5,125,130,south',
  '5,45,2,-60,118,76,north',
  '6,38,1,66,121,79,=1+2',
].join('\n') + '\n';

const CODEBOOK = `primaryKey: pid
fields:
  - { name: pid, type: integer }
  - { name: age, type: integer, constraints: { minimum: 18, maximum: 99 } }
  - { name: sex, type: integer, constraints: { enum: [1, 2] } }
  - { name: weight_kg, type: number, constraints: { minimum: 30 } }
  - { name: sbp, type: integer }
  - { name: dbp, type: integer }
  - { name: site, type: string, constraints: { enum: [north, south] } }
rules:
  - name: dbp-below-sbp
    assert: "dbp < sbp"
    message: Diastolic pressure must be below systolic pressure
    severity: warning
`;

const PEOPLE = `people:
  - id: researcher
    name: Ilse Varga
    role: principal investigator
    approves: [{ table: visits, columns: all }]
`;

const HEADER = 'query,table,key,column,value,rule,severity,message,decision,new_value,comment,answered_by,answered_on';

describe('query sheets: export, answer, import', () => {
  let root: string;
  beforeAll(async () => {
    root = await makeProject({
      'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n',
      'raw/visits/2026-01-02-delivery.csv': RAW,
      'codebook/visits.yaml': CODEBOOK,
      'people.yaml': PEOPLE,
    });
  });
  afterAll(() => removeDir(root));

  it('exports one row per open cell discrepancy, a rule row per column it reads, formulas neutralised', async () => {
    const result = await errata(root, ['queries', 'export', '--out', 'queries.csv']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('wrote 7 queries to queries.csv (visits 7)');
    const text = readFileSync(path.join(root, 'queries.csv'), 'utf8');
    expect(text.startsWith(`\uFEFF${HEADER}\r\n`)).toBe(true);
    const rows = cellsOf(text);
    // By hand: 999 > 99; 3 not in [1, 2]; 7.5 and -60 < 30; "=1+2" not in [north, south];
    // 130 < 125 is false, so the rule asks about both dbp and sbp of participant 4.
    expect(rows.map((r) => `${r.column}/${r.key}=${r.value}`).sort()).toEqual(
      ['age/2=999', 'dbp/4=130', 'sbp/4=125', 'sex/3=3', "site/6='=1+2", 'weight_kg/4=7.5', 'weight_kg/5=-60'].sort(),
    );
    for (const r of rows) expect(r.query).toBe(queryId('visits', r.key, r.column, r.rule));
    // OWASP CSV injection guidance: a cell starting with = is prefixed with ' ; a number like -60 is not.
    expect(text).toContain(",'=1+2,enum,");
    expect(text).toContain(',-60,minimum,');
  });

  it('imports the answers: notes and drafts for the usable rows, the others reported with their reason', async () => {
    const exported = readFileSync(path.join(root, 'queries.csv'), 'utf8');
    const lines = exported.replace(/^\uFEFF/, '').trimEnd().split('\r\n');
    const answer = (column: string, key: string, fields: string) => {
      const at = lines.findIndex((l) => cellsOf(`${HEADER}\r\n${l}\r\n`)[0]?.column === column && cellsOf(`${HEADER}\r\n${l}\r\n`)[0]?.key === key);
      expect(at, `${column}/${key}`).toBeGreaterThan(0);
      lines[at] = lines[at].replace(/,,,,,$/, `,${fields}`);
      return at + 1;
    };
    const ageRow = lines.find((l) => l.includes(',age,'))!;
    const rowAge = answer('age', '2', 'missing,,"999 means the question was not asked (site coding sheet)",,');
    const rowSex = answer('sex', '3', 'change,2,paper form says 2,,');
    const rowMalformed = answer('weight_kg', '4', 'change,seventy,as written on the form,,');
    const rowSite = answer('site', '6', 'change,north,the clinic is in the north district,,');
    const rowKeep = answer('dbp', '4', 'keep,,both readings confirmed on the monitor printout,,');
    // A row the researcher added by hand for a participant who does not exist.
    lines.push(ageRow.replace(',2,age,', ',99,age,').replace(/,,,,,$/, ',change,45,,,'));
    const rowUnknownKey = lines.length;
    writeFileSync(path.join(root, 'answers.csv'), `${lines.join('\r\n')}\r\n`);

    const dry = await errata(root, ['queries', 'import', 'answers.csv', '--answerer', 'researcher', '--date', '2026-03-14', '--dry-run']);
    expect(dry.code).toBe(1);
    expect(dry.stdout).toContain('4 answers used: would write 4 notes and 3 draft corrections');
    expect(existsSync(path.join(root, 'notes'))).toBe(false);

    const result = await errata(root, ['queries', 'import', 'answers.csv', '--answerer', 'researcher', '--date', '2026-03-14', '--format', 'json']);
    expect(result.code).toBe(1);
    const report = JSON.parse(result.stdout) as {
      used: Array<{ row: number; column: string; key: string; decision: string; note: string; correction: string | null }>;
      rejected: Array<{ row: number; reason: string }>;
      unanswered: number[];
    };
    expect(report.used.map((u) => [u.row, u.column, u.key, u.decision])).toEqual(
      [[rowAge, 'age', '2', 'missing'], [rowSex, 'sex', '3', 'change'], [rowSite, 'site', '6', 'change'], [rowKeep, 'dbp', '4', 'keep']].sort((a, b) => Number(a[0]) - Number(b[0])),
    );
    expect(report.rejected.map((r) => r.row)).toEqual([rowMalformed, rowUnknownKey]);
    expect(report.rejected[0].reason).toBe('new_value "seventy" is not a valid number for column weight_kg');
    expect(report.rejected[1].reason).toBe('no row with key "99" in table visits');
    expect(report.unanswered).toHaveLength(2);

    const notes = readdirSync(path.join(root, 'notes')).sort();
    expect(notes).toHaveLength(4);
    const keep = report.used.find((u) => u.decision === 'keep')!;
    expect(keep.correction).toBeNull();
    const keepNote = parseNote(keep.note, readFileSync(path.join(root, keep.note), 'utf8'));
    expect(keepNote).toMatchObject({ approver: 'researcher', role: 'principal investigator', date: '2026-03-14' });
    expect(keepNote.evidence).toContain('both readings confirmed on the monitor printout');
    expect(keepNote.evidence).toContain(`row ${rowKeep}`);

    const site = report.used.find((u) => u.column === 'site')!;
    const draft = parseCorrection(site.correction!, readFileSync(path.join(root, site.correction!), 'utf8'));
    expect(draft.approval).toBe(queryId('visits', '6', 'site', 'enum'));
    expect(draft.steps).toHaveLength(1);
    expect(draft.steps[0]).toMatchObject({ kind: 'edit', cells: [{ key: '6', column: 'site', from: '=1+2', to: 'north' }] });
    const age = report.used.find((u) => u.column === 'age')!;
    expect(parseCorrection(age.correction!, readFileSync(path.join(root, age.correction!), 'utf8')).steps[0]).toMatchObject({ cells: [{ key: '2', column: 'age', from: '999', to: null }] });
  });

  it('the drafts build into the clean data, and a second export leaves the answered queries out', async () => {
    await commit(root, 'Answers to the first query sheet');
    const build = await errata(root, ['build']);
    expect(build.stderr).toBe('');
    expect(build.code).toBe(0);
    const clean = readFileSync(path.join(root, 'clean', 'visits.csv'), 'utf8').trimEnd().split('\n');
    expect(clean).toEqual([
      'pid,age,sex,weight_kg,sbp,dbp,site',
      '1,34,1,71.2,120,80,north',
      '2,,2,68,110,70,south',
      '3,41,2,80,130,90,north',
      '4,52,1,7.5,125,130,south',
      '5,45,2,-60,118,76,north',
      '6,38,1,66,121,79,north',
    ]);
    const again = await errata(root, ['queries', 'export', '--out', 'queries.xlsx']);
    expect(again.code).toBe(0);
    expect(again.stdout).toContain('wrote 3 queries to queries.xlsx');
    expect(again.stdout).toContain('1 already answered (their notes exist) left out');
  });

  it('an .xlsx sheet answered in a spreadsheet (typed numbers, a date cell) imports the same way', async () => {
    const workbook = new ExcelJS.Workbook();
    await workbook.xlsx.readFile(path.join(root, 'queries.xlsx'));
    const sheet = workbook.getWorksheet('Queries')!;
    const header = (sheet.getRow(1).values as unknown[]).slice(1) as string[];
    expect(header.join(',')).toBe(HEADER);
    const at = (name: string) => header.indexOf(name) + 1;
    const found = new Map<string, ExcelJS.Row>();
    sheet.eachRow((row, n) => {
      if (n > 1) found.set(`${row.getCell(at('column')).value}/${row.getCell(at('key')).value}`, row);
    });
    expect([...found.keys()].sort()).toEqual(['sbp/4', 'weight_kg/4', 'weight_kg/5']);
    expect(found.get('weight_kg/4')!.getCell(at('decision')).dataValidation).toMatchObject({ type: 'list', formulae: ['"keep,change,missing"'] });
    const fill = (key: string, decision: string, value: ExcelJS.CellValue, comment: string) => {
      const row = found.get(key)!;
      row.getCell(at('decision')).value = decision;
      row.getCell(at('new_value')).value = value;
      row.getCell(at('comment')).value = comment;
      row.getCell(at('answered_by')).value = 'researcher';
      row.getCell(at('answered_on')).value = new Date(Date.UTC(2026, 3, 2));
    };
    fill('weight_kg/4', 'Change', 70.5, 'the scale printout reads 70.5');
    fill('weight_kg/5', 'missing', null, 'no weight was taken at this visit');
    fill('sbp/4', 'keep', null, 'confirmed');
    await workbook.xlsx.writeFile(path.join(root, 'answers.xlsx'));

    const result = await errata(root, ['queries', 'import', 'answers.xlsx']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('3 answers used: wrote 3 notes and 2 draft corrections');
    const noteFile = `notes/${queryId('visits', '4', 'weight_kg', 'minimum')}.md`;
    const note = parseNote(noteFile, readFileSync(path.join(root, noteFile), 'utf8'));
    expect(note.date).toBe('2026-04-02');
    await commit(root, 'Answers to the second query sheet');
    expect((await errata(root, ['build'])).code).toBe(0);
    const clean = readFileSync(path.join(root, 'clean', 'visits.csv'), 'utf8');
    expect(clean).toContain('\n4,52,1,70.5,125,130,south\n');
    expect(clean).toContain('\n5,45,2,,118,76,north\n');
  });

  it('an answer to a cell that changed since the export is refused, and a sheet without its columns is an error', async () => {
    writeFileSync(path.join(root, 'stale.csv'), `${HEADER}\r\n${queryId('visits', '1', 'sex', 'enum')},visits,1,sex,3,enum,error,x,change,2,,researcher,2026-05-01\r\n`);
    const stale = await errata(root, ['queries', 'import', 'stale.csv', '--format', 'json']);
    expect(stale.code).toBe(1);
    expect(JSON.parse(stale.stdout).rejected[0].reason).toMatch(/^the cell has changed since the sheet was written: it held "3" and now holds "1"/);
    // One cell asked about under two rules and changed in both answers: the second would conflict.
    const twice = [
      `${queryId('visits', '1', 'age', 'minimum')},visits,1,age,34,minimum,error,x,change,35,,researcher,2026-05-01`,
      `${queryId('visits', '1', 'age', 'maximum')},visits,1,age,34,maximum,error,x,change,36,,researcher,2026-05-01`,
    ];
    writeFileSync(path.join(root, 'twice.csv'), `${HEADER}\r\n${twice.join('\r\n')}\r\n`);
    const both = await errata(root, ['queries', 'import', 'twice.csv', '--dry-run', '--format', 'json']);
    expect(both.code).toBe(1);
    const report = JSON.parse(both.stdout) as { used: Array<{ row: number }>; rejected: Array<{ row: number; reason: string }> };
    expect(report.used.map((u) => u.row)).toEqual([2]);
    expect(report.rejected).toEqual([{ row: 3, query: queryId('visits', '1', 'age', 'maximum'), reason: 'row 2 of this sheet already changes this cell; give one answer that changes it' }]);
    writeFileSync(path.join(root, 'broken.csv'), 'query,table,key\r\nQ-1,visits,3\r\n');
    const broken = await errata(root, ['queries', 'import', 'broken.csv']);
    expect(broken.code).toBe(2);
    expect(broken.stderr).toContain('broken.csv:1: the sheet has no column "column"');
  });
});

/** The rows of a sheet CSV as objects (a small RFC 4180 reader written for the test). */
function cellsOf(text: string): Array<Record<string, string>> {
  const records: string[][] = [];
  let field = '';
  let fields: string[] = [];
  let quoted = false;
  const body = text.replace(/^\uFEFF/, '');
  for (let i = 0; i < body.length; i++) {
    const ch = body[i];
    if (quoted) {
      if (ch === '"' && body[i + 1] === '"') (field += '"'), i++;
      else if (ch === '"') quoted = false;
      else field += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === ',') fields.push(field), (field = '');
    else if (ch === '\r') continue;
    else if (ch === '\n') fields.push(field), records.push(fields), (fields = []), (field = '');
    else field += ch;
  }
  const [header, ...rows] = records;
  return rows.map((r) => Object.fromEntries(header.map((h, i) => [h, r[i]])));
}
