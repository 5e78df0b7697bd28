import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { KERNEL_MODULE, kernelModuleText } from '../../scripts/wasm.js';
import { FIT_COMBINATIONS, Unsuitable, countStretch, keyHashes, type RowStretch } from '../../src/diff/old-rows.js';
import { CsvKernel } from '../../src/engine/csv-kernel.js';
import { createRandom } from '../../src/demo/random.js';
import { FITS_DATE, FITS_INTEGER, FITS_NUMBER } from '../../src/engine/text-fits.js';
import { removeDir, tempDir } from '../helpers/project.js';

describe('the compiled kernel', () => {
  it('is what csv-kernel.wat compiles to (run `npm run wasm` after editing the .wat)', async () => {
    expect(readFileSync(KERNEL_MODULE, 'utf8')).toBe(await kernelModuleText());
  });
});

describe('equal bytes in the kernel', () => {
  it('counts the bytes two stretches share from their start, as a byte-by-byte comparison does', () => {
    const kernel = new CsvKernel();
    const memory = kernel.reserve(1 << 16);
    const random = createRandom(20261202);
    for (let trial = 0; trial < 300; trial += 1) {
      const length = Math.floor(random.next() * 200);
      const a = Buffer.from(Array.from({ length }, () => Math.floor(random.next() * 256)));
      const b = Buffer.from(a);
      // Most trials change one byte somewhere (often near a word's edge); some change none.
      if (length > 0 && trial % 5 !== 0) b[Math.floor(random.next() * length)] ^= 1 + Math.floor(random.next() * 255);
      // Odd offsets, so that the eight-byte reads are unaligned.
      memory.set(a, 1001);
      memory.set(b, 30003);
      const max = Math.floor(random.next() * (length + 1));
      // The reference: Node's Buffer comparison, prefix by prefix.
      let same = 0;
      while (same < max && a.subarray(same, same + 1).equals(b.subarray(same, same + 1))) same += 1;
      expect(kernel.sameBytes(1001, 30003, max), `trial ${trial}`).toBe(same);
    }
  });
});

describe('counting a stretch of the old file in the kernel', () => {
  let dir: string;
  beforeAll(() => {
    dir = tempDir('errata-kernel-');
  });
  afterAll(() => removeDir(dir));

  /** The file's data lines as one stretch, read `windowBytes` at a time. */
  const stretchOf = (name: string, text: string, options: Partial<RowStretch> = {}): RowStretch => {
    const file = path.join(dir, name);
    writeFileSync(file, text);
    const start = Buffer.byteLength(text.slice(0, text.indexOf('\n') + 1));
    return { file, start, end: Buffer.byteLength(text), delimiter: 44, width: 3, keyColumns: [0], windowBytes: 1 << 16, crlf: false, ...options };
  };

  it('counts each column by its values fits, and gives each row the key hashes of keyHashes', () => {
    // Worked by hand: column n holds two integers (which are numbers too) and a decimal; column d a
    // date, a missing value (not counted), and the quoted empty string (text, counted as no fit).
    const lines = ['id,n,d', 'A1,12,2024-02-29', '"B 2",1.5,', 'C3,-7,""'];
    const text = `${lines.join('\r\n')}\r\n`;
    const counted = countStretch(stretchOf('small.csv', text, { crlf: true }));
    expect(counted.rows).toBe(3);
    const count = (column: number, fits: number) => counted.combinations[column * FIT_COMBINATIONS + fits];
    expect(count(1, FITS_INTEGER | FITS_NUMBER)).toBe(2);
    expect(count(1, FITS_NUMBER)).toBe(1);
    expect(count(2, FITS_DATE)).toBe(1);
    expect(count(2, 0)).toBe(1);
    expect(counted.combinations.reduce((sum, c) => sum + c, 0)).toBe(5);
    const bytes = Buffer.from(text);
    let at = text.indexOf('\n') + 1;
    for (let row = 0; row < 3; row += 1) {
      const stop = bytes.indexOf(10, at);
      const key = keyHashes(bytes, at, stop, 44, [0]);
      expect([counted.first[row], counted.second[row]]).toEqual([key!.h1, key!.h2]);
      at = stop + 1;
    }
  });

  it('gives the same answer block by block as at once, for a key of two columns', () => {
    // Long lines first, so the first guess at the row count (from the first lines) falls short and
    // the hash arrays must grow; 1.3 MB, so the window moves on many times.
    const rows = Array.from(
      { length: 40000 },
      (_, i) => `S${i % 7},${i},${(i * 37) % 1000}.${i % 10},2021-${String(1 + (i % 12)).padStart(2, '0')}-15,${i < 3000 ? 'a longer note '.repeat(4) : ''}`,
    );
    const text = `site,id,x,d,note\n${rows.join('\n')}\n`;
    const options = { width: 5, keyColumns: [0, 1] };
    const blocks = countStretch(stretchOf('blocks.csv', text, { ...options, windowBytes: 1024 }));
    const whole = countStretch(stretchOf('whole.csv', text, { ...options, windowBytes: 4 << 20 }));
    expect(blocks.rows).toBe(40000);
    expect(Array.from(blocks.combinations)).toEqual(Array.from(whole.combinations));
    expect(blocks.combinations[2 * FIT_COMBINATIONS + FITS_NUMBER]).toBe(40000);
    expect(blocks.combinations[3 * FIT_COMBINATIONS + FITS_DATE]).toBe(40000);
    expect(blocks.combinations[4 * FIT_COMBINATIONS]).toBe(3000);
    const bytes = Buffer.from(text);
    let at = text.indexOf('\n') + 1;
    for (let row = 0; row < 40000; row += 1) {
      const stop = bytes.indexOf(10, at);
      const key = keyHashes(bytes, at, stop, 44, [0, 1])!;
      if (blocks.first[row] !== key.h1 || blocks.second[row] !== key.h2) expect.fail(`row ${row}: kernel hashes differ from keyHashes`);
      at = stop + 1;
    }
  });

  // What a line must be for the scan to read it as the engine would (RFC 4180 section 2 for the
  // quoting; a line break inside quotes would make a line less than a row).
  const refused: Array<[string, string, Partial<RowStretch>]> = [
    ['a,b"c,d\n', 'quote inside an unquoted field', {}],
    ['a,"b\nc",d\n', 'line break inside quotes', {}],
    ['a,b,c\nd,e\r,f\r\n', 'a line without CR LF', { crlf: true }],
    ['a,"b"x,c\n', 'text after a closing quote', {}],
    ['a,b\n', 'ragged row', {}],
    ['a,b,c,d\n', 'ragged row', {}],
    [',b,c\n', 'missing or padded key', {}],
    [' a,b,c\n', 'missing or padded key', {}],
    ['"a""x",b,c\n', 'quote in a key', {}],
  ];
  it.each(refused)('refuses %j: %s', (data, reason, options) => {
    const stretch = stretchOf('refused.csv', `id,b,c${options.crlf ? '\r' : ''}\n${data}`, options);
    expect(() => countStretch(stretch)).toThrow(new Unsuitable(reason));
  });
});
