/**
 * Error types the CLI and API map to exit codes and HTTP statuses.
 *
 * - `InputError`: the user's file or request is wrong (exit 2, HTTP 400/422).
 * - `ServiceError`: a database, Redis or other service failed (exit 1, HTTP 503).
 * - anything else is a bug (exit 1, HTTP 500).
 *
 * Runners keep a failed job's kind (`FailureKind`) beside its message: input
 * errors are final, service errors are retried for a time budget, bugs a few
 * times.
 */
export class InputError extends Error {
  override readonly name = 'InputError';
  readonly kind = 'input' as const;
  /** The file (or request part) the problem is in, when there is one. */
  readonly source?: string;
  constructor(message: string, source?: string) {
    super(source ? `${source}: ${message}` : message);
    this.source = source;
  }
}

/** The services heatledger depends on, as named in messages. */
export type ServiceName = 'PostgreSQL' | 'Redis' | 'worker';

export class ServiceError extends Error {
  override readonly name = 'ServiceError';
  readonly kind = 'service' as const;
  /** Which service failed, when known. */
  readonly service?: ServiceName;
  constructor(message: string, options?: { cause?: unknown; service?: ServiceName }) {
    super(message, options?.cause === undefined ? undefined : { cause: options.cause });
    if (options?.service) this.service = options.service;
  }
}

/** Why a job or command failed: the user's input, a service, or a bug in heatledger. */
export type FailureKind = 'input' | 'service' | 'bug';

/**
 * The kind of a thrown value: from the error's `kind` property (set by
 * InputError and ServiceError, and kept when an error crosses a thread or a
 * process), else 'bug'.
 */
export function failureKind(e: unknown): FailureKind {
  const kind = (e as { kind?: unknown } | null)?.kind;
  return kind === 'input' || kind === 'service' ? kind : 'bug';
}

/** True for errors that are the user's input (exit code 2). */
export function isInputError(e: unknown): e is InputError {
  return e instanceof Error && failureKind(e) === 'input';
}

/** True for errors of a service (database, Redis): exit code 1, retried by the runners. */
export function isServiceError(e: unknown): e is ServiceError {
  return e instanceof Error && failureKind(e) === 'service';
}
