/**
 * The error catalogue. Every error Strandline raises on purpose is a StrandError with a
 * stable code (`STRAND_...`), a message, the original `cause` when there is one, and an
 * HTTP status where the error can reach an API client.
 */

/** Stable error codes, with the HTTP status used when one reaches the API. */
export const ERROR_CODES = {
  STRAND_CONFIG_INVALID: { status: 500 },
  STRAND_CONFIG_UNREADABLE: { status: 500 },
  STRAND_SOURCE_UNREADABLE: { status: 400 },
  STRAND_SOURCE_TOO_LARGE: { status: 413 },
  STRAND_SOURCE_FORBIDDEN: { status: 403 },
  STRAND_FEED_MALFORMED: { status: 400 },
  STRAND_FEED_UNKNOWN_FORMAT: { status: 415 },
  STRAND_FEED_HOSTILE: { status: 400 },
  STRAND_ENCODING_UNSUPPORTED: { status: 415 },
  STRAND_ARTICLE_EMPTY: { status: 422 },
  STRAND_ARTICLE_TOO_LARGE: { status: 413 },
  STRAND_ARTICLE_INVALID: { status: 422 },
  STRAND_STORE_FAILED: { status: 503 },
  STRAND_STORE_UNAVAILABLE: { status: 503 },
  STRAND_LEASE_LOST: { status: 503 },
  STRAND_NOT_FOUND: { status: 404 },
  STRAND_WEBHOOK_FAILED: { status: 502 },
  STRAND_REQUEST_INVALID: { status: 400 },
  STRAND_EVAL_INPUT_INVALID: { status: 400 },
  STRAND_EVAL_FAILED: { status: 500 },
  STRAND_MODEL_MISSING: { status: 500 },
  STRAND_ANALYSIS_FAILED: { status: 500 },
  STRAND_FEED_CONFLICT: { status: 409 },
  STRAND_SUBSCRIPTION_CONFLICT: { status: 409 },
  STRAND_CORRECTION_CONFLICT: { status: 409 },
  STRAND_REVIEW_EMPTY: { status: 409 },
  STRAND_VECTOR_SPACE_CHANGED: { status: 500 },
  STRAND_UNAUTHORIZED: { status: 401 },
  STRAND_FORBIDDEN: { status: 403 },
  STRAND_RATE_LIMITED: { status: 429 },
  STRAND_STOPPED: { status: 503 },
  STRAND_LISTEN_FAILED: { status: 500 },
} as const;

/** One of the stable error codes. */
export type ErrorCode = keyof typeof ERROR_CODES;

/** The root of every deliberate Strandline error. */
export class StrandError extends Error {
  /** Stable, documented code; clients and tests match on it, never on the message. */
  readonly code: ErrorCode;
  /** HTTP status to use if this error reaches the API. */
  readonly status: number;

  constructor(code: ErrorCode, message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'StrandError';
    this.code = code;
    this.status = ERROR_CODES[code].status;
  }
}

/** True when `err` is a StrandError, optionally with the given code. */
export function isStrandError(err: unknown, code?: ErrorCode): err is StrandError {
  return err instanceof StrandError && (code === undefined || err.code === code);
}

/** A one-line description of any thrown value, for warnings and summaries. */
export function describeError(err: unknown): string {
  if (err instanceof StrandError) return `${err.code}: ${err.message}`;
  if (err instanceof Error) return err.message;
  return String(err);
}
