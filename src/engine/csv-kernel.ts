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

  /** `size` 32-bit integers of the memory from byte `at` (a multiple of 4). */
  int32s(at: number, size: number): Int32Array {
    return new Int32Array(this.exports.memory.buffer, at, size);
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

  count(...args: Parameters<KernelExports['count']>): number {
    return this.exports.count(...args);
  }
}
