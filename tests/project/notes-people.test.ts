import { describe, expect, it } from 'vitest';
import { parseNote } from '../../src/project/notes.js';
import { parsePeople } from '../../src/project/people.js';

describe('approval notes', () => {
  it('reads the front matter and keeps the evidence text', () => {
    const note = parseNote('notes/N-0003.md', '---\nid: N-0003\napprover: rkovac\nrole: principal investigator\ndate: 2026-02-01\napproves: recode sex 3 as missing\n---\nMinutes of 1 February 2026, item 4.\n');
    expect(note).toEqual({
      id: 'N-0003',
      file: 'notes/N-0003.md',
      approver: 'rkovac',
      role: 'principal investigator',
      date: '2026-02-01',
      approves: 'recode sex 3 as missing',
      evidence: 'Minutes of 1 February 2026, item 4.',
    });
  });

  it('names the file line of a missing field, counting the opening --- as line 1', () => {
    // Line 1 "---", line 2 id, line 3 approver, line 4 date: the mapping starts on line 2.
    expect(() => parseNote('notes/N-1.md', '---\nid: N-1\napprover: a\ndate: 2026-01-01\n---\ntext\n')).toThrow(
      expect.objectContaining({ code: 'NOTE_INVALID', data: expect.objectContaining({ file: 'notes/N-1.md', line: 2 }) }),
    );
    expect(() => parseNote('notes/N-1.md', '---\nid: N-1\napprover: a\ndate: 2026-01-01\napproves: x\ncolour: red\n---\n')).toThrow(
      expect.objectContaining({ data: expect.objectContaining({ line: 6 }) }),
    );
  });

  it('refuses a date that is not a calendar date and an id that does not match the file name', () => {
    expect(() => parseNote('notes/N-1.md', '---\nid: N-1\napprover: a\ndate: 2026-13-45\napproves: x\n---\n')).toThrow(/calendar date/);
    expect(() => parseNote('notes/N-2.md', '---\nid: N-1\napprover: a\ndate: 2026-01-01\napproves: x\n---\n')).toThrow(/does not match its file name/);
    expect(() => parseNote('notes/N-1.md', 'no front matter')).toThrow(/no front matter/);
  });
});

describe('people.yaml', () => {
  it('reads authority per table: all columns, or a list', () => {
    const people = parsePeople('people:\n  - id: a\n    name: Ana\n    approves:\n      - table: visits\n        columns: all\n  - id: b\n    name: Bo\n    approves:\n      - table: visits\n        columns: [height_cm]\n');
    expect(people.map((p) => [p.id, [...p.authority]])).toEqual([
      ['a', [['visits', 'all']]],
      ['b', [['visits', ['height_cm']]]],
    ]);
  });

  it('names the line of an unknown key', () => {
    expect(() => parsePeople('people:\n  - id: a\n    name: Ana\n    may: everything\n')).toThrow(
      expect.objectContaining({ code: 'PROJECT_INVALID', data: expect.objectContaining({ file: 'people.yaml', line: 4 }) }),
    );
  });
});
