/**
 * Every failure the user can act on is an ErrataError: a stable `code` that tests and JSON output
 * rely on, a one-line `hint` saying what to do, and structured `data` (file, line, key, column...).
 * The CLI catches them once at the top and maps them to exit code 2.
 */
export type ErrorCode =
  | 'USAGE'
  | 'PROJECT_NOT_FOUND'
  | 'PROJECT_INVALID'
  | 'YAML_INVALID'
  | 'SCHEMA_INVALID'
  | 'TABLE_UNKNOWN'
  | 'INPUT_MISSING'
  | 'INPUT_FORMAT'
  | 'CSV_MALFORMED'
  | 'CSV_HEADER'
  | 'ENCODING'
  | 'KEY_MISSING'
  | 'KEY_DUPLICATE'
  | 'KEY_COLUMN_MISSING'
  | 'CORRECTION_NAME'
  | 'CORRECTION_INVALID'
  | 'CORRECTION_FAILED'
  | 'EXPRESSION_FORBIDDEN'
  | 'EXPRESSION_INVALID'
  | 'CONVERSION_FAILED'
  | 'NOTE_INVALID'
  | 'GIT'
  | 'REVISION_UNKNOWN'
  | 'CELL_UNKNOWN'
  | 'PATH_OUTSIDE'
  | 'OUTPUT_WRITE'
  | 'ENGINE'
  | 'NOT_AVAILABLE'
  | 'LOCKED'
  | 'TIMEOUT'
  | 'QUERY_SHEET'
  | 'REPORT';

export interface ErrorData {
  file?: string;
  line?: number;
  column?: string;
  key?: string;
  commit?: string;
  [field: string]: unknown;
}

export class ErrataError extends Error {
  readonly code: ErrorCode;
  readonly hint: string;
  readonly data: ErrorData;

  constructor(code: ErrorCode, message: string, options: { hint?: string; data?: ErrorData; cause?: unknown } = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = 'ErrataError';
    this.code = code;
    this.hint = options.hint ?? '';
    this.data = options.data ?? {};
  }

  /** "file:line: message" when the error has a place, else the message alone. */
  get located(): string {
    const where = this.data.file ? `${this.data.file}${this.data.line ? `:${this.data.line}` : ''}: ` : '';
    return `${where}${this.message}`;
  }

  toJSON(): Record<string, unknown> {
    return { code: this.code, message: this.message, hint: this.hint, data: this.data };
  }
}

export function isErrataError(value: unknown): value is ErrataError {
  return value instanceof ErrataError;
}
