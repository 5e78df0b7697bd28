import { mkdirSync } from 'node:fs';
import type * as DuckDB from '@duckdb/node-api';
import type { DuckDBConnection, DuckDBInstance, DuckDBValue } from '@duckdb/node-api';
import { ErrataError } from '../errors.js';
import { onFirstUse } from '../lazy-module.js';

/** @duckdb/node-api, loaded when the first session opens (init, log and help never open one). */
const duckdbModule = onFirstUse<typeof DuckDB>('@duckdb/node-api');

export type Row = Record<string, unknown>;
export type Params = DuckDBValue[] | Record<string, DuckDBValue>;

export interface SessionOptions {
  /** Folder DuckDB may spill to when a query outgrows memory; created if missing. */
  spillDir?: string;
  /** DuckDB memory limit, e.g. "2GB". */
  memoryLimit?: string;
  /**
   * Hand freed memory back to the system promptly. By default DuckDB's allocator keeps up to 128 MiB
   * per thread cached, and a diff of two 1 GB files ran 0.4-0.7 GB above its memory limit; returning
   * it costs some time, so only a session whose whole-process memory is bounded asks for it.
   */
  returnFreedMemory?: boolean;
  threads?: number;
  /** Longest one statement may run, in milliseconds; default `statementTimeout()`. */
  timeoutMs?: number;
}

/** Ten minutes: generous for a whole table's correction step on a large delivery. */
const DEFAULT_TIMEOUT_MS = 10 * 60_000;
/** How long an interrupted statement may take to stop before the session gives up on it. */
const GRACE_MS = 5_000;
let defaultTimeoutMs: number | null = null;

/**
 * The statement time limit for sessions opened from now on: `--timeout` (set by the CLI through
 * `setStatementTimeout`), else ERRATA_TIMEOUT in seconds, else ten minutes.
 */
export function statementTimeout(): number {
  if (defaultTimeoutMs !== null) return defaultTimeoutMs;
  const fromEnv = Number(process.env.ERRATA_TIMEOUT);
  return Number.isFinite(fromEnv) && fromEnv > 0 ? fromEnv * 1000 : DEFAULT_TIMEOUT_MS;
}

export function setStatementTimeout(ms: number): void {
  defaultTimeoutMs = ms;
}

/**
 * One DuckDB instance per command. Extensions never auto-install or auto-load (a download would fail
 * offline and would let data decide what code runs); after inputs are loaded, `lockDown` confines file
 * access to the folders outputs go to and freezes the configuration. Every statement runs under a time
 * limit (`statementTimeout`), so an expression from a pull request cannot keep a review busy forever.
 */
export class Session {
  /** Set when a statement ignored the interrupt: the connection is still busy and cannot be closed. */
  private stuck = false;

  private constructor(
    private readonly instance: DuckDBInstance,
    private readonly connection: DuckDBConnection,
    private readonly timeoutMs: number,
    /** False for a second connection (`connectAgain`): closing it leaves the instance open. */
    private readonly ownsInstance = true,
  ) {}

  static async open(options: SessionOptions = {}): Promise<Session> {
    const config: Record<string, string> = {
      autoinstall_known_extensions: 'false',
      autoload_known_extensions: 'false',
      preserve_insertion_order: 'true',
    };
    if (options.memoryLimit) config.memory_limit = options.memoryLimit;
    if (options.returnFreedMemory) {
      config.allocator_flush_threshold = '16MB';
      config.allocator_background_threads = 'true';
    }
    if (options.threads) config.threads = String(options.threads);
    if (options.spillDir) {
      mkdirSync(options.spillDir, { recursive: true });
      config.temp_directory = options.spillDir;
    }
    const instance = await duckdbModule().DuckDBInstance.create(':memory:', config);
    const connection = await instance.connect();
    return new Session(instance, connection, options.timeoutMs ?? statementTimeout());
  }

  async run(sql: string, params?: Params): Promise<void> {
    try {
      await this.bounded(sql, () => this.connection.run(sql, params));
    } catch (error) {
      throw engineError(error, sql);
    }
  }

  /** Rows as plain JS objects (BIGINT as bigint, DOUBLE as number, VARCHAR as string, NULL as null). */
  async all<T extends Row = Row>(sql: string, params?: Params): Promise<T[]> {
    try {
      const reader = await this.bounded(sql, () => this.connection.runAndReadAll(sql, params));
      return reader.getRowObjectsJS() as T[];
    } catch (error) {
      throw engineError(error, sql);
    }
  }

  async one<T extends Row = Row>(sql: string, params?: Params): Promise<T> {
    const rows = await this.all<T>(sql, params);
    return rows[0];
  }

  /** Run a statement and let the caller translate DuckDB's own error into a user-facing one. */
  async runRaw(sql: string, params?: Params): Promise<void> {
    await this.bounded(sql, () => this.connection.run(sql, params));
  }

  async allRaw<T extends Row = Row>(sql: string, params?: Params): Promise<T[]> {
    const reader = await this.bounded(sql, () => this.connection.runAndReadAll(sql, params));
    return reader.getRowObjectsJS() as T[];
  }

  /**
   * Run one statement under the time limit. At the limit the connection is interrupted, which stops
   * any query that works through rows; a single computation that never looks at the interrupt (one
   * enormous string or list) is abandoned after a grace period, marked `stuck` for the CLI to end the
   * process, since the engine cannot be closed while it runs.
   */
  private async bounded<T>(sql: string, work: () => Promise<T>): Promise<T> {
    if (this.stuck) throw timeoutError(this.timeoutMs, sql, true);
    let interrupted = false;
    let giveUp: NodeJS.Timeout | undefined;
    const limit = setTimeout(() => {
      interrupted = true;
      this.connection.interrupt();
    }, this.timeoutMs);
    const abandoned = new Promise<never>((_, reject) => {
      giveUp = setTimeout(() => {
        this.stuck = true;
        reject(timeoutError(this.timeoutMs, sql, true));
      }, this.timeoutMs + Math.min(GRACE_MS, this.timeoutMs));
    });
    try {
      return await Promise.race([work(), abandoned]);
    } catch (error) {
      if (interrupted && !(error instanceof ErrataError)) throw timeoutError(this.timeoutMs, sql, false, error);
      throw error;
    } finally {
      clearTimeout(limit);
      clearTimeout(giveUp);
    }
  }

  /**
   * From here on, SQL can read and write only under `allowedDirs` and cannot change settings:
   * correction expressions run after this point.
   */
  async lockDown(allowedDirs: readonly string[]): Promise<void> {
    for (const dir of allowedDirs) mkdirSync(dir, { recursive: true });
    const list = allowedDirs.map((d) => `'${(d.endsWith('/') ? d : d + '/').replaceAll("'", "''")}'`).join(', ');
    await this.run(`SET allowed_directories = [${list}]`);
    await this.run(`SET enable_external_access = false`);
    await this.run(`SET lock_configuration = true`);
  }

  /**
   * Another connection to the same database, so that two statements can run at once (each reading
   * one file, say). Tables either creates are seen by both. Close it before this session.
   */
  async connectAgain(): Promise<Session> {
    return new Session(this.instance, await this.instance.connect(), this.timeoutMs, false);
  }

  close(): void {
    if (this.stuck) return;
    this.connection.closeSync();
    if (this.ownsInstance) this.instance.closeSync();
  }
}

function timeoutError(ms: number, sql: string, stuck: boolean, cause?: unknown): ErrataError {
  return new ErrataError('TIMEOUT', `a query ran longer than the limit of ${ms / 1000} s and was stopped`, {
    hint: 'If the data is simply large, raise the limit with --timeout SECONDS (or ERRATA_TIMEOUT=SECONDS); if an expression builds huge values or never ends, fix it.',
    data: { sql, stuck },
    cause,
  });
}

function engineError(error: unknown, sql: string): ErrataError {
  if (error instanceof ErrataError) return error;
  const message = error instanceof Error ? error.message : String(error);
  return new ErrataError('ENGINE', firstLines(message, 3), {
    hint: 'This is a query the engine could not run; the message above says why.',
    data: { sql },
    cause: error,
  });
}

export function firstLines(text: string, count: number): string {
  return text.split('\n').slice(0, count).join('\n').trim();
}
