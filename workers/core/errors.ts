/**
 * Error types the CLI and API map to exit codes and HTTP statuses.
 *
 * - `InputError`: the user's file or request is wrong (exit 2, HTTP 400/422).
 * - `ServiceError`: a database, Redis or other service failed (exit 1, HTTP 503).
 * - anything else is a bug (exit 1, HTTP 500).
 */
export class InputError extends Error {
  override readonly name = 'InputError';
  /** The file (or request part) the problem is in, when there is one. */
  readonly source?: string;
  constructor(message: string, source?: string) {
    super(source ? `${source}: ${message}` : message);
    this.source = source;
  }
}

export class ServiceError extends Error {
  override readonly name = 'ServiceError';
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
  }
}

/** True for errors that are the user's input (exit code 2). */
export function isInputError(e: unknown): e is InputError {
  return e instanceof Error && e.name === 'InputError';
}
