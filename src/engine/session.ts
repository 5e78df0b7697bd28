import { mkdirSync } from 'node:fs';
import { DuckDBInstance, type DuckDBConnection, type DuckDBValue } from '@duckdb/node-api';
import { ErrataError } from '../errors.js';

export type Row = Record<string, unknown>;
export type Params = DuckDBValue[] | Record<string, DuckDBValue>;

export interface SessionOptions {
  /** Folder DuckDB may spill to when a query outgrows memory; created if missing. */
  spillDir?: string;
  /** DuckDB memory limit, e.g. "2GB". */
  memoryLimit?: string;
  threads?: number;
}

/**
 * One DuckDB instance per command. Extensions never auto-install or auto-load (a download would fail
 * offline and would let data decide what code runs); after inputs are loaded, `lockDown` confines file
 * access to the folders outputs go to and freezes the configuration.
 */
export class Session {
  private constructor(
    private readonly instance: DuckDBInstance,
    private readonly connection: DuckDBConnection,
  ) {}

  static async open(options: SessionOptions = {}): Promise<Session> {
    const config: Record<string, string> = {
      autoinstall_known_extensions: 'false',
      autoload_known_extensions: 'false',
      preserve_insertion_order: 'true',
    };
    if (options.memoryLimit) config.memory_limit = options.memoryLimit;
    if (options.threads) config.threads = String(options.threads);
    if (options.spillDir) {
      mkdirSync(options.spillDir, { recursive: true });
      config.temp_directory = options.spillDir;
    }
    const instance = await DuckDBInstance.create(':memory:', config);
    const connection = await instance.connect();
    return new Session(instance, connection);
  }

  async run(sql: string, params?: Params): Promise<void> {
    try {
      await this.connection.run(sql, params);
    } catch (error) {
      throw engineError(error, sql);
    }
  }

  /** Rows as plain JS objects (BIGINT as bigint, DOUBLE as number, VARCHAR as string, NULL as null). */
  async all<T extends Row = Row>(sql: string, params?: Params): Promise<T[]> {
    try {
      const reader = await this.connection.runAndReadAll(sql, params);
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
    await this.connection.run(sql, params);
  }

  async allRaw<T extends Row = Row>(sql: string, params?: Params): Promise<T[]> {
    const reader = await this.connection.runAndReadAll(sql, params);
    return reader.getRowObjectsJS() as T[];
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

  close(): void {
    this.connection.closeSync();
    this.instance.closeSync();
  }
}

function engineError(error: unknown, sql: string): ErrataError {
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
