import { randomBytes } from 'node:crypto';
import { readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildProject } from '../../src/build/build-project.js';
import { assertSafeExpression } from '../../src/engine/expression-guard.js';
import { Session } from '../../src/engine/session.js';
import { ErrataError } from '../../src/errors.js';
import { WorkingTree } from '../../src/git/tree.js';
import { errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

/**
 * A pull request is untrusted: its correction files, codebook rules and the options of `errata fix`
 * may carry SQL meant to read a secret, write a file, change the engine's settings or run forever.
 * Each hostile expression below must be refused (with the file and line) or stopped by the time
 * limit, and a secret file outside the project must never show up anywhere.
 */

let outside: string; // a folder outside the project, standing for the rest of the machine
let secretFile: string;
let secret: string;
let root: string;

beforeAll(async () => {
  outside = tempDir('errata-outside-');
  secret = `SECRET-${randomBytes(8).toString('hex')}`;
  secretFile = path.join(outside, 'secret.txt');
  writeFileSync(secretFile, `${secret}\n`);
  root = await makeProject({
    'errata.yaml': 'tables:\n  t:\n    raw: raw/t/\n    key: id\n',
    'raw/t/delivery.csv': 'id,height,site\n1,60.5,N\n2,170.2,S\n3,65,N\n',
    'codebook/t.yaml': 'fields:\n  - name: id\n    type: integer\n',
  });
});
afterAll(() => {
  removeDir(root);
  removeDir(outside);
});

/** Every hostile expression; {SECRET} and {OUT} stand for a file outside the project and a path to write to. */
const HOSTILE: Array<[string, string, string?]> = [
  ['reading a file with read_csv', "read_csv('{SECRET}')"],
  ['reading /etc/passwd', "read_csv('/etc/passwd')"],
  ['reading a file with read_text', "read_text('{SECRET}')"],
  ['reading a file with read_blob', "read_blob('{SECRET}')"],
  ['listing files with glob', "len(glob('{DIR}/*'))"],
  ['a subquery reading a file', "(SELECT content FROM read_text('{SECRET}'))"],
  ['a file reader under a quoted name', `"read_text"('{SECRET}')`],
  ['a file reader under a schema-qualified name', "main.read_text('{SECRET}')"],
  ['a file reader inside a lambda', "list_transform([1], x -> read_text('{SECRET}'))"],
  ['a file reader inside try()', "try(read_blob('{SECRET}'))"],
  ['writing a file with COPY after ";"', "1) AS a FROM t; COPY t TO '{OUT}'; SELECT (1"],
  ['attaching a database', "1); ATTACH '{OUT}' AS x; SELECT (1"],
  ['a huge memory limit through SET', "1); SET memory_limit = '100000GB'; SELECT (1"],
  ['changing a setting through PRAGMA', "1); PRAGMA enable_external_access; SELECT (1"],
  ['reading a setting', "current_setting('allowed_directories')"],
  ['listing settings', "len(duckdb_settings())"],
  ['installing an extension', '1); INSTALL httpfs; SELECT (1'],
  ['loading an extension', "1); LOAD '{OUT}'; SELECT (1"],
  ['reading the environment', "getenv('HOME')"],
  ['a never-ending recursive CTE in a scalar subquery', '(WITH RECURSIVE r(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM r) SELECT max(n) FROM r)'],
  ['a cross join of huge ranges', '(SELECT count(*) FROM range(1000000000) a, range(1000000000) b)'],
  ['a huge range as a table function', 'unnest(range(1000000000))'],
  ['string_agg over repeat()', "string_agg(repeat('x', 1000000000), '')"],
  ['a line comment hiding the rest of the wrapper', '1) FROM t --'],
  ['a block comment before ";"', '1 /* */ ;'],
  // Parses as one (strangely named) column, so it is harmless: the step fails for want of that column.
  ['a statement end inside a quoted identifier', '"height""; COPY t TO \'{OUT}\'; --"', 'ENGINE'],
  ['a qualified name reaching another table', 'raw_t.height'],
  ['running SQL from text', "query('SELECT * FROM read_text(''{SECRET}'')')"],
];

function fill(expression: string): string {
  return expression.replaceAll('{SECRET}', secretFile).replaceAll('{DIR}', outside).replaceAll('{OUT}', path.join(outside, 'written.db'));
}

function snapshot(dir: string, skip: (rel: string) => boolean = () => false): Map<string, string> {
  const out = new Map<string, string>();
  const visit = (rel: string) => {
    for (const name of readdirSync(path.join(dir, rel))) {
      const child = rel ? `${rel}/${name}` : name;
      if (skip(child)) continue;
      const full = path.join(dir, child);
      if (statSync(full).isDirectory()) visit(child);
      else out.set(child, readFileSync(full, 'latin1'));
    }
  };
  visit('');
  return out;
}

/** Every file under the project, cache and scratch space included, as text, to search for the secret. */
function everything(dir: string): string {
  return [...snapshot(dir, (rel) => rel === '.git').values()].join('\n');
}

describe('hostile expressions in a correction file', () => {
  it(`has at least 20 hostile cases (${HOSTILE.length})`, () => {
    expect(HOSTILE.length).toBeGreaterThanOrEqual(20);
  });

  let session: Session;
  let scratch: string;
  beforeAll(async () => {
    scratch = tempDir('errata-scratch-');
    session = await Session.open({ timeoutMs: 5_000 });
    await session.run("CREATE TABLE t AS SELECT 1 AS id, 60.5 AS height, 'N' AS site");
    await session.run('CREATE TABLE raw_t AS SELECT * FROM t');
    await session.lockDown([scratch]);
  });
  afterAll(() => {
    session.close();
    removeDir(scratch);
  });

  it.each(HOSTILE)('refuses %s with the file and line, touching nothing outside', async (_what, template, code) => {
    const before = snapshot(outside);
    const expression = fill(template);
    const where = { file: 'corrections/t/0001-hostile.yaml', line: 4, what: 'set height' };
    let error = await assertSafeExpression(session, expression, where).then(
      () => null,
      (e: unknown) => e,
    );
    // What the guard lets through must still fail harmlessly when the step runs on the table.
    if (error === null && code) error = await session.run(`UPDATE t SET height = (${expression})`).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(ErrataError);
    const e = error as ErrataError;
    if (!code) {
      expect(['EXPRESSION_FORBIDDEN', 'EXPRESSION_INVALID']).toContain(e.code);
      expect(e.data).toMatchObject({ file: where.file, line: where.line });
    } else {
      expect(e.code).toBe(code);
    }
    expect(e.message).not.toContain(secret);
    expect(snapshot(outside)).toEqual(before);
    expect(readdirSync(scratch)).toEqual([]);
  });

  it('stops a build at the correction file and line, writing no output and no trace of the secret', async () => {
    writeFiles(root, {
      'corrections/t/0001-hostile.yaml': ['reason: A decision', 'approval: N-0001', 'steps:', `  - set: { height: ${JSON.stringify(`(SELECT content FROM read_text('${secretFile}'))`)} }`, ''].join('\n'),
    });
    const error = await buildProject({ tree: new WorkingTree(root), workDir: path.join(root, '.errata', 'tmp'), keepRaw: false }).then(
      (build) => {
        build.session.close();
        return null;
      },
      (e: unknown) => e,
    );
    expect(error).toBeInstanceOf(ErrataError);
    expect((error as ErrataError).data).toMatchObject({ file: 'corrections/t/0001-hostile.yaml', line: 4 });
    expect(readdirSync(root)).not.toContain('clean');
    expect(everything(root)).not.toContain(secret);
  });
});

describe('hostile expressions through the command line', () => {
  beforeAll(() => {
    writeFiles(root, { 'corrections/t/0001-hostile.yaml': 'reason: A decision\napproval: N-0001\nsteps:\n  - set: { height: "height * 2" }\n' });
  });

  it('errata fix refuses a file reader in --set and leaves no correction file behind', async () => {
    writeFiles(root, { 'notes/N-0001.md': '---\nid: N-0001\napprover: a\ndate: 2026-01-03\napproves: heights\n---\nok\n' });
    const before = snapshot(root, (rel) => rel === '.git' || rel === '.errata');
    const result = await errata(root, ['fix', 't', '--set', `height=(SELECT content FROM read_text('${secretFile}'))`, '--reason', 'r', '--approval', 'N-0001']);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/not allowed/);
    expect(result.stdout + result.stderr).not.toContain(secret);
    expect(snapshot(root, (rel) => rel === '.git' || rel === '.errata')).toEqual(before);
  });

  it('errata fix refuses a statement smuggled into --where', async () => {
    const result = await errata(root, ['fix', 't', '--set', 'height=1', '--where', `1; COPY t TO '${path.join(outside, 'w.csv')}'`, '--reason', 'r', '--approval', 'N-0001']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain(';');
    expect(readdirSync(outside)).toEqual(['secret.txt']);
  });

  it('a codebook rule that reads a file is refused with the codebook file and line', async () => {
    writeFiles(root, {
      'codebook/t.yaml': `fields:\n  - name: id\n    type: integer\nrules:\n  - name: sneaky\n    assert: "length(read_text('${secretFile}')) > 0"\n`,
    });
    const result = await errata(root, ['check', 't']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('codebook/t.yaml:5');
    expect(result.stderr).toMatch(/not allowed/);
    expect(result.stdout + result.stderr).not.toContain(secret);
    writeFiles(root, { 'codebook/t.yaml': 'fields:\n  - name: id\n    type: integer\n' });
  });

  it('an expression that passes the guard but never finishes is stopped by the time limit with a TIMEOUT hint', async () => {
    // Nested list lambdas: one value per row, each costing ~10^9 additions; the engine gives no
    // interrupt point inside one value, so this exercises the last resort as well.
    writeFiles(root, {
      'corrections/t/0001-hostile.yaml':
        'reason: A decision\napproval: N-0001\nsteps:\n  - set: { height: "list_sum(list_transform(range(40000), x -> list_sum(range(40000))))" }\n',
    });
    const started = Date.now();
    const result = await errata(root, ['build'], { ERRATA_TIMEOUT: '1' });
    expect(Date.now() - started).toBeLessThan(20_000);
    expect(result.code).not.toBe(0);
    expect(result.stderr).toContain('corrections/t/0001-hostile.yaml:4');
    expect(result.stderr).toMatch(/longer than the limit of 1 s/);
    expect(result.stderr).toContain('--timeout');
    expect(readdirSync(root)).not.toContain('clean');
  });
});

describe('the locked-down engine, should the guard ever let something through', () => {
  let session: Session;
  let allowed: string;
  beforeAll(async () => {
    allowed = tempDir('errata-allowed-');
    session = await Session.open({ timeoutMs: 2_000 });
    await session.run("CREATE TABLE t AS SELECT 1 AS id, 'a' AS s");
    await session.lockDown([allowed]);
  });
  afterAll(() => {
    session.close();
    removeDir(allowed);
  });

  it.each([
    ['reading a file', () => `SELECT * FROM read_text('${secretFile}')`],
    ['listing a folder', () => `SELECT * FROM glob('${outside}/*')`],
    ['writing a file', () => `COPY t TO '${path.join(outside, 'w.csv')}'`],
    ['attaching a database', () => `ATTACH '${path.join(outside, 'x.db')}' AS x`],
    ['raising the memory limit', () => "SET memory_limit = '100000GB'"],
    ['turning file access back on', () => 'SET enable_external_access = true'],
    ['widening the allowed folders', () => "SET allowed_directories = ['/']"],
    ['installing an extension', () => 'INSTALL httpfs'],
    ['loading an extension', () => 'LOAD httpfs'],
  ])('refuses %s after lock-down', async (_what, sql) => {
    await expect(session.run(sql())).rejects.toBeInstanceOf(ErrataError);
    expect(readdirSync(outside)).toEqual(['secret.txt']);
  });

  it('stops a query that runs past the time limit with a TIMEOUT error', async () => {
    const started = Date.now();
    const error = await session.run('SELECT count(*) FROM range(1000000000) a, range(1000000000) b').catch((e: unknown) => e);
    expect(error).toBeInstanceOf(ErrataError);
    expect((error as ErrataError).code).toBe('TIMEOUT');
    expect((error as ErrataError).hint).toMatch(/--timeout|ERRATA_TIMEOUT/);
    expect(Date.now() - started).toBeLessThan(8_000);
    // The connection is usable again afterwards.
    expect(await session.one<{ n: number }>('SELECT 41 + 1 AS n')).toEqual({ n: 42 });
  });
});
