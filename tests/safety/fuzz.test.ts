import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadRawTable } from '../../src/build/load-raw.js';
import { parseCorrection } from '../../src/corrections/parse-correction.js';
import { Session } from '../../src/engine/session.js';
import { ErrataError } from '../../src/errors.js';
import { WorkingTree } from '../../src/git/tree.js';
import { parseCodebook } from '../../src/project/codebook.js';
import { parseConfig } from '../../src/project/config.js';
import { parseNote } from '../../src/project/notes.js';
import { parsePeople } from '../../src/project/people.js';
import { errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';
import { splitmix32 } from '../../bench/splitmix.js';
import { TABLE_T } from './table-t.js';

/**
 * Seeded fuzzing of the loaders: broken CSV and broken YAML go into the real parsers (and a few into
 * the real command line). Every run must end in success or an ErrataError — never another exception
 * (an internal error) and never a hang. Counts and time are bounded; a failing case names its seed and
 * index so it can be replayed.
 */

const SEED = 20_260_101;
const CSV_CASES = 300;
const YAML_CASES = 400;
const CLI_CASES = 2;
const CASE_LIMIT_MS = 10_000;

type Random = () => number;
const pick = <T>(random: Random, items: readonly T[]): T => items[Math.floor(random() * items.length)];

const CSV_BASE = ['id,age,site,note', '1,34,N,"a, b"', '2,,S,""', '3,51,N,"line one\nline two"', '4,-99,E,plain', '5,200,N,"say ""hi"""'].join('\n') + '\n';

/** Pieces that tend to break CSV: delimiters, quotes, line ends of every kind, bad bytes, a BOM. */
const CSV_NOISE: Buffer[] = [',', '"', '""', '\n', '\r', '\r\n', '\t', ' ', 'a', '1', ';', '\u00e9', '\u{1F600}'].map((s) => Buffer.from(s)).concat([
  Buffer.from([0x00]),
  Buffer.from([0xff]),
  Buffer.from([0xc3]),
  Buffer.from([0xe9]),
  Buffer.from([0xef, 0xbb, 0xbf]),
  Buffer.from([0xfe, 0xff]),
]);

/** A broken variant of `base`: a few random insertions, deletions, duplications and truncations. */
function mutate(random: Random, base: Buffer, noise: readonly Buffer[]): Buffer {
  let bytes = Buffer.from(base);
  const edits = 1 + Math.floor(random() * 4);
  for (let e = 0; e < edits; e++) {
    const at = Math.floor(random() * (bytes.length + 1));
    switch (Math.floor(random() * 5)) {
      case 0:
        bytes = Buffer.concat([bytes.subarray(0, at), pick(random, noise), bytes.subarray(at)]);
        break;
      case 1:
        bytes = Buffer.concat([bytes.subarray(0, at), bytes.subarray(Math.min(bytes.length, at + 1 + Math.floor(random() * 8)))]);
        break;
      case 2:
        bytes = Buffer.concat([bytes.subarray(0, at), bytes.subarray(at, at + Math.floor(random() * 20)), bytes.subarray(at)]);
        break;
      case 3:
        bytes = bytes.subarray(0, at);
        break;
      default:
        bytes = Buffer.concat([bytes.subarray(0, at), Buffer.from(pick(random, noise).toString('latin1').repeat(1 + Math.floor(random() * 50)), 'latin1'), bytes.subarray(at)]);
    }
  }
  return bytes;
}

async function within<T>(ms: number, work: Promise<T>, label: string): Promise<T> {
  let timer: NodeJS.Timeout | undefined;
  const limit = new Promise<never>((_, reject) => {
    timer = setTimeout(() => reject(new Error(`${label} did not finish within ${ms} ms`)), ms);
  });
  try {
    return await Promise.race([work, limit]);
  } finally {
    clearTimeout(timer);
  }
}

/** The outcome of one case: 'ok', or the ErrataError code; anything else fails the test with the case's label. */
async function outcome(label: string, work: () => unknown): Promise<string> {
  try {
    await within(CASE_LIMIT_MS, Promise.resolve().then(work), label);
    return 'ok';
  } catch (error) {
    if (error instanceof ErrataError) return error.code;
    throw new Error(`${label}: not an ErrataError: ${(error as Error)?.stack ?? String(error)}`);
  }
}

describe('fuzzed CSV deliveries', () => {
  let dir: string;
  let session: Session;
  const table = TABLE_T;
  beforeAll(async () => {
    dir = tempDir();
    session = await Session.open({ timeoutMs: CASE_LIMIT_MS });
  });
  afterAll(() => {
    session.close();
    removeDir(dir);
  });

  it(`${CSV_CASES} broken files each load or give an ErrataError naming the file`, async () => {
    const random = splitmix32(SEED);
    const codes = new Map<string, number>();
    const base = Buffer.from(CSV_BASE);
    for (let i = 0; i < CSV_CASES; i++) {
      const content = mutate(random, base, CSV_NOISE);
      writeFiles(dir, { 'raw/t/delivery.csv': content });
      const label = `CSV case ${i} (seed ${SEED}): ${JSON.stringify(content.toString('latin1'))}`;
      let located = true;
      const code = await outcome(label, async () => {
        try {
          await loadRawTable(session, new WorkingTree(dir), table, 'raw_t');
        } catch (error) {
          if (error instanceof ErrataError) located = error.data.file === 'raw/t/delivery.csv' || error.data.file === 'raw/t';
          throw error;
        }
      });
      expect(located, label).toBe(true);
      codes.set(code, (codes.get(code) ?? 0) + 1);
    }
    // The generator does break files: most cases are refused, and in more than one way.
    expect([...codes.keys()].filter((c) => c !== 'ok').length).toBeGreaterThan(2);
    expect(codes.get('ENGINE') ?? 0, JSON.stringify([...codes])).toBe(0);
  });
});

describe('fuzzed YAML project files', () => {
  const FILES: Array<[string, string, (text: string) => unknown]> = [
    ['errata.yaml', 'version: 1\ntables:\n  visits:\n    raw: raw/visits/\n    key: [pid, visit]\n    deliveries: append\n    delimiter: ";"\n', (t) => parseConfig(t)],
    [
      'corrections/visits/0001-heights.yaml',
      'reason: Heights under 90 were inches\napproval: N-0001\nsteps:\n  - set: { height: "round(height * 2.54, 1)" }\n    where: height < 90\n  - edit:\n      - { key: 2, column: weight, from: 7.12, to: 71.2 }\n  - recode: { column: smoker, map: { 1: yes, 2: no }, else: missing }\n  - drop: [legacy]\n',
      (t) => parseCorrection('corrections/visits/0001-heights.yaml', t),
    ],
    [
      'codebook/visits.yaml',
      'fields:\n  - name: pid\n    type: integer\n    constraints: { required: true, unique: true }\n  - name: smoker\n    type: string\n    constraints: { enum: [yes, no] }\n    missingValues: ["9"]\nrules:\n  - name: adult\n    assert: age >= 18\n',
      (t) => parseCodebook('codebook/visits.yaml', t),
    ],
    ['notes/N-0001.md', '---\nid: N-0001\napprover: rkovac\nrole: principal investigator\ndate: 2026-01-03\napproves: heights\n---\nE-mail of 2026-01-03.\n', (t) => parseNote('notes/N-0001.md', t)],
    ['people.yaml', 'people:\n  - id: rkovac\n    name: Renata Kovac\n    approves:\n      - table: visits\n        columns: all\n', (t) => parsePeople(t)],
  ];
  const YAML_NOISE = [':', ': ', '-', '- ', '[', ']', '{', '}', '"', "'", '\n', '  ', '\t', '#', '&a', '*a', '!!int ', '|', '>', '---\n', '...', '?', ',', 'null', '~', '1e999', '\u0000', '\ufeff', 'x'].map((s) => Buffer.from(s));

  it.each(FILES)(`${YAML_CASES} broken versions of %s each parse or give an ErrataError`, async (_file, base, parse) => {
    const random = splitmix32(SEED + base.length);
    const codes = new Map<string, number>();
    for (let i = 0; i < YAML_CASES; i++) {
      const text = mutate(random, Buffer.from(base), YAML_NOISE).toString('utf8');
      const code = await outcome(`YAML case ${i} (seed ${SEED + base.length}): ${JSON.stringify(text)}`, () => parse(text));
      codes.set(code, (codes.get(code) ?? 0) + 1);
    }
    expect([...codes.keys()].some((c) => c !== 'ok'), JSON.stringify([...codes])).toBe(true);
  });
});

describe('fuzzed projects through the command line', () => {
  it(`${CLI_CASES} broken projects each end with exit 0 or 2 and no internal error`, async () => {
    const random = splitmix32(SEED + 1);
    for (let i = 0; i < CLI_CASES; i++) {
      const root = await makeProject({
        'errata.yaml': mutate(random, Buffer.from('tables:\n  t:\n    raw: raw/t/\n    key: id\n'), [Buffer.from(' '), Buffer.from('x')]).toString('utf8'),
        'raw/t/delivery.csv': mutate(random, Buffer.from(CSV_BASE), CSV_NOISE),
        'corrections/t/0001-x.yaml': 'reason: r\nsteps:\n  - set: { age: "age" }\n',
      });
      try {
        const result = await errata(root, ['build']);
        const label = `CLI case ${i}: ${result.stderr}`;
        expect([0, 1, 2], label).toContain(result.code);
        expect(result.stderr, label).not.toContain('internal error');
        if (result.code === 2) expect(result.stderr, label).toMatch(/^error: /m);
      } finally {
        removeDir(root);
      }
    }
  });
});
