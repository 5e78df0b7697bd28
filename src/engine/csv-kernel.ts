import { CSV_KERNEL_WASM } from './csv-kernel-wasm.js';

/** The little of the WebAssembly API used here (Node's type definitions leave it out). */
interface WebAssemblyApi {
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object, imports: object) => { exports: Record<string, unknown> };
}

interface KernelExports {
  memory: { buffer: ArrayBuffer; grow(pages: number): number };
  sameBytes(a: number, b: number, max: number): number;
  count(pos: number, end: number, width: number, crlf: number, keys: number, special: number, counts: number, first: number, second: number): number;
}

const PAGE = 1 << 16;
let compiled: object | undefined;

/**
 * One instance of csv-kernel.wat (see there): its own memory, which the caller lays out and fills
 * through the view `reserve` returns. Compiled once per thread, on first use.
 */
export class CsvKernel {
  private readonly exports: KernelExports;
  private view: Uint8Array;

  constructor() {
    const api = (globalThis as unknown as { WebAssembly: WebAssemblyApi }).WebAssembly;
    compiled ??= new api.Module(Buffer.from(CSV_KERNEL_WASM, 'base64'));
    this.exports = new api.Instance(compiled, {}).exports as unknown as KernelExports;
    this.view = new Uint8Array(this.exports.memory.buffer);
  }

  /** The memory, at least `size` bytes of it (growing keeps what it holds). */
  reserve(size: number): Uint8Array {
    const memory = this.exports.memory;
    if (memory.buffer.byteLength < size) {
      memory.grow(Math.ceil((size - memory.buffer.byteLength) / PAGE));
      this.view = new Uint8Array(memory.buffer);
    }
    return this.view;
  }

  /**
   * `size` bytes of the memory from `at`, as a Buffer that shares them. Growing the memory detaches
   * it, so the caller reserves all it needs first.
   */
  buffer(at: number, size: number): Buffer {
    return Buffer.from(this.exports.memory.buffer, at, size);
  }

  /** Whether `buffer` is memory of this kernel (as from `buffer`), and not detached. */
  holds(buffer: Buffer): boolean {
    return buffer.buffer === this.exports.memory.buffer;
  }

  /** How many bytes from memory offsets `a` and `b` are equal, at most `max`. */
  sameBytes(a: number, b: number, max: number): number {
    return this.exports.sameBytes(a, b, max);
  }

  /** `count` (see csv-kernel.wat): the rows, or a negative code for why the lines were refused. */
  countLines(...args: Parameters<KernelExports['count']>): number {
    return this.exports.count(...args);
  }

  /** `size` 32-bit integers of the memory from byte `at` (a multiple of 4). */
  int32s(at: number, size: number): Int32Array {
    return new Int32Array(this.exports.memory.buffer, at, size);
  }
}

/** Type-fit combinations counted per column: every sum of the fit flags of text-fits.ts. */
export const FIT_COMBINATIONS = 32;

/** Why `count` refused lines, by its code (-1, -2, ...). */
const REFUSALS = [
  'quote inside an unquoted field',
  'line break inside quotes',
  'a line without CR LF',
  'text after a closing quote',
  'ragged row',
  'missing or padded key',
  'quote in a key',
];

/**
 * The kernel's `count` over lines of one shape (`width` fields, these key columns, a field ending at
 * any of `fieldEnds` or a newline), a block of whole lines at a time. Its memory holds the counts per
 * column and fit combination, the key columns, the bytes that end a field, then the block, then its
 * rows' key hashes.
 */
export class LineCounter {
  private readonly kernel = new CsvKernel();
  private readonly keysAt: number;
  private readonly specialAt: number;
  private readonly blockAt: number;
  private firstAt = 0;
  private secondAt = 0;

  constructor(
    private readonly width: number,
    keyColumns: readonly number[],
    fieldEnds: readonly number[],
    private readonly crlf: boolean,
  ) {
    this.keysAt = width * FIT_COMBINATIONS * 4;
    this.specialAt = this.keysAt + width;
    this.blockAt = aligned(this.specialAt + 256);
    const layout = this.kernel.reserve(this.blockAt);
    for (const c of keyColumns) layout[this.keysAt + c] = 1;
    for (const byte of [...fieldEnds, NEWLINE]) layout[this.specialAt + byte] = 1;
  }

  /** Count whole lines (each ending in a newline, at least one): the rows, or why they were refused. */
  count(lines: Uint8Array): { rows: number } | { refused: string } {
    // A row has at least `width` bytes: its delimiters and newline.
    const most = Math.floor(lines.length / this.width) + 1;
    this.firstAt = aligned(this.blockAt + lines.length);
    this.secondAt = this.firstAt + 4 * most;
    this.kernel.reserve(this.secondAt + 4 * most).set(lines, this.blockAt);
    const end = this.blockAt + lines.length;
    const rows = this.kernel.countLines(this.blockAt, end, this.width, this.crlf ? 1 : 0, this.keysAt, this.specialAt, 0, this.firstAt, this.secondAt);
    return rows < 0 ? { refused: REFUSALS[-rows - 1] } : { rows };
  }

  /**
   * Add the counts per column and fit combination (FIT_COMBINATIONS a column) into `into`, and start
   * them again from zero, so that the kernel's 32-bit counts cannot overflow.
   */
  takeCounts(into: Float64Array): void {
    const counts = this.kernel.int32s(0, this.width * FIT_COMBINATIONS);
    for (let i = 0; i < counts.length; i += 1) into[i] += counts[i];
    counts.fill(0);
  }

  /** The last block's rows' key hashes, valid until the next `count`. */
  hashes(rows: number): { first: Int32Array; second: Int32Array } {
    return { first: this.kernel.int32s(this.firstAt, rows), second: this.kernel.int32s(this.secondAt, rows) };
  }
}

const NEWLINE = 10;
const aligned = (offset: number) => (offset + 15) & ~15;
