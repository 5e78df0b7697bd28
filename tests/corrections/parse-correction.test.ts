import { afterAll, describe, expect, it } from 'vitest';
import { loadCorrections } from '../../src/corrections/load-corrections.js';
import { parseCorrection } from '../../src/corrections/parse-correction.js';
import type { Step } from '../../src/corrections/types.js';
import { ErrataError } from '../../src/errors.js';
import { WorkingTree } from '../../src/git/tree.js';
import { removeDir, tempDir, writeFiles } from '../helpers/project.js';

const FILE = 'corrections/visits/0007-height-inches.yaml';

/** The error parseCorrection throws for `text`, or a failed expectation when it throws none. */
function parseError(text: string, file = FILE): ErrataError {
  try {
    parseCorrection(file, text);
  } catch (error) {
    expect(error).toBeInstanceOf(ErrataError);
    return error as ErrataError;
  }
  throw new Error('expected the correction to be refused');
}

function lines(...rows: string[]): string {
  return rows.join('\n') + '\n';
}

describe('schema errors name the file and the 1-based line, and say what is expected', () => {
  it('an unknown top-level key is reported at its line with the keys allowed there', () => {
    const error = parseError(lines(
      'reason: Heights in inches', // 1
      'approval: N-0007', // 2
      'steps:', // 3
      '  - drop: legacy', // 4
      'approver: Dr Example', // 5
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.file).toBe(FILE);
    expect(error.data.line).toBe(5);
    expect(error.message).toContain('"approver"');
    expect(error.message).toMatch(/reason, approval, steps/);
  });

  it('an unknown key inside a step is reported at its line with the keys that step takes', () => {
    const error = parseError(lines(
      'reason: Visits as a count', // 1
      'steps:', // 2
      '  - convert:', // 3
      '      column: visits', // 4
      '      to: integer', // 5
      '      into: visit_count', // 6
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(6);
    expect(error.message).toContain('"into"');
    expect(error.message).toMatch(/column, to, as, invalid/);
  });

  it('a key beside a step kind that does not take it is reported at that key', () => {
    const error = parseError(lines(
      'reason: Remove the old code', // 1
      'steps:', // 2
      '  - drop: legacy', // 3
      '    where: site = 1', // 4
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(4);
    expect(error.message).toContain('"where"');
    expect(error.message).toContain('drop');
  });

  it('a correction without a reason is refused, naming the missing key', () => {
    const error = parseError(lines(
      'approval: N-0007', // 1
      'steps:', // 2
      '  - drop: legacy', // 3
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.file).toBe(FILE);
    expect(error.data.line).toBe(1);
    expect(error.message).toContain('"reason"');
  });

  it('two step kinds in one list item are refused at that item, naming both kinds', () => {
    const error = parseError(lines(
      'reason: Tidy', // 1
      'steps:', // 2
      '  - drop: legacy', // 3
      '  - set: { height: "height / 10" }', // 4
      '    rename: { weight: weight_kg }', // 5
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(4);
    expect(error.message).toContain('set');
    expect(error.message).toContain('rename');
    expect(error.message).toMatch(/one step per list item/);
  });

  it('a conversion to a type errata does not know is refused at the to: line, listing the types', () => {
    const error = parseError(lines(
      'reason: Visits as a count', // 1
      'steps:', // 2
      '  - convert:', // 3
      '      column: visits', // 4
      '      to: float', // 5
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(5);
    expect(error.message).toContain('"float"');
    expect(error.message).toMatch(/string, integer, number, boolean, date/);
  });

  it('a guarded edit without from is refused at the edit line', () => {
    const error = parseError(lines(
      'reason: Typing slip', // 1
      'steps:', // 2
      '  - edit:', // 3
      '      - { key: 1042, column: weight, from: 7.12, to: 71.2 }', // 4
      '      - { key: 1043, column: weight, to: 68.0 }', // 5
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(5);
    expect(error.message).toContain('"from"');
  });

  it('a recode else that is not keep, missing or { value: X } is refused at its line', () => {
    const error = parseError(lines(
      'reason: Labels', // 1
      'steps:', // 2
      '  - recode:', // 3
      '      column: sex', // 4
      '      map: { 1: male, 2: female }', // 5
      '      else: other', // 6
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(6);
    expect(error.message).toMatch(/keep, missing, or \{ value: X \}/);
  });

  it('a delete without its own reason is refused at the delete line', () => {
    const error = parseError(lines(
      'reason: Remove test rows', // 1
      'steps:', // 2
      '  - drop: legacy', // 3
      '  - delete: { where: "id >= 9000" }', // 4
    ));
    expect(error.code).toBe('CORRECTION_INVALID');
    expect(error.data.line).toBe(4);
    expect(error.message).toContain('"reason"');
  });

  it('a YAML syntax error names the line it is on', () => {
    const error = parseError(lines(
      'reason: Heights in inches', // 1
      'steps:', // 2
      '  - drop: legacy', // 3
      'reason: Heights in inches, again', // 4: a second "reason"
    ));
    expect(error.code).toBe('YAML_INVALID');
    expect(error.data.file).toBe(FILE);
    expect(error.data.line).toBe(4);
  });
});

describe('correction file names', () => {
  it.each(['7-height.yaml', '0007_height.yaml', '0007-Height.yaml', '0007-height.txt', '00007-height.yaml'])(
    'a file named %s is refused with CORRECTION_NAME',
    (name) => {
      const error = parseError('reason: r\nsteps:\n  - drop: legacy\n', `corrections/visits/${name}`);
      expect(error.code).toBe('CORRECTION_NAME');
      expect(error.data.file).toBe(`corrections/visits/${name}`);
      expect(error.message).toContain(name);
    },
  );

  it('the file name gives the correction its id, number and table', () => {
    const correction = parseCorrection(FILE, 'reason: r\nsteps:\n  - drop: legacy\n');
    expect([correction.id, correction.number, correction.table]).toEqual(['0007-height-inches.yaml', 7, 'visits']);
  });

  const roots: string[] = [];
  afterAll(() => roots.forEach(removeDir));

  it('two corrections with one number are refused, naming both files', async () => {
    const root = tempDir();
    roots.push(root);
    writeFiles(root, {
      'corrections/visits/0003-weights.yaml': 'reason: a\nsteps:\n  - drop: a\n',
      'corrections/visits/0003-heights.yaml': 'reason: b\nsteps:\n  - drop: b\n',
      'corrections/visits/0004-sites.yaml': 'reason: c\nsteps:\n  - drop: c\n',
    });
    const error = await loadCorrections(new WorkingTree(root), 'corrections/visits').then(
      () => null,
      (e: unknown) => e,
    );
    expect(error).toBeInstanceOf(ErrataError);
    const e = error as ErrataError;
    expect(e.code).toBe('CORRECTION_NAME');
    expect(e.message).toContain('0003-weights.yaml');
    expect(e.message).toContain('0003-heights.yaml');
  });

  it('corrections load in the order of their numbers', async () => {
    const root = tempDir();
    roots.push(root);
    writeFiles(root, {
      'corrections/visits/0010-late.yaml': 'reason: late\nsteps:\n  - drop: c\n',
      'corrections/visits/0002-early.yaml': 'reason: early\nsteps:\n  - drop: a\n',
      'corrections/visits/0009-middle.yaml': 'reason: middle\nsteps:\n  - drop: b\n',
    });
    const corrections = await loadCorrections(new WorkingTree(root), 'corrections/visits');
    expect(corrections.map((c) => c.number)).toEqual([2, 9, 10]);
  });
});

describe('values keep their exact text', () => {
  const correction = parseCorrection(FILE, lines(
    'reason: Codes and decimals as written', // 1
    'steps:', // 2
    '  - edit:', // 3
    '      - { key: 007, column: dose, from: 1.50, to: 1.5 }', // 4
    '      - { key: 8, column: note, from: ~, to: "seen" }', // 5
    '  - recode: { column: site, map: { 01: 1.0, 2: ~ }, else: { value: 0.50 } }', // 6
    '  - missing: { column: score, values: [-99, 007, .5] }', // 7
    '  - set: { dose: 1.50 }', // 8
  ));
  const step = <K extends Step['kind']>(index: number, kind: K) => {
    const s = correction.steps[index];
    expect(s.kind).toBe(kind);
    return s as Extract<Step, { kind: K }>;
  };

  it('a key written 007 stays "007" and a value written 1.50 stays "1.50"', () => {
    const edit = step(0, 'edit');
    expect(edit.cells[0]).toMatchObject({ key: '007', column: 'dose', from: '1.50', to: '1.5' });
  });

  it('~ in an edit means the cell must be missing, and the line of each edit is kept', () => {
    const edit = step(0, 'edit');
    expect(edit.cells[1]).toMatchObject({ key: '8', from: null, to: 'seen' });
    expect(edit.cells.map((c) => c.origin.line)).toEqual([4, 5]);
    expect(edit.origin.line).toBe(3);
  });

  it('recode codes and the else value keep their text, and ~ maps to missing', () => {
    const recode = step(1, 'recode');
    expect(recode.map).toEqual([
      { from: '01', to: '1.0' },
      { from: '2', to: null },
    ]);
    expect(recode.otherwise).toEqual({ value: '0.50' });
  });

  it('missing values keep their text', () => {
    expect(step(2, 'missing').values).toEqual(['-99', '007', '.5']);
  });

  it('a set expression written as a bare number keeps its digits', () => {
    expect(step(3, 'set').assignments).toEqual([{ column: 'dose', expression: '1.50' }]);
    expect(step(3, 'set').origin.line).toBe(8);
  });
});
