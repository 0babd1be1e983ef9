import type { ErrorRequestHandler, RequestHandler } from 'express';
import { z } from 'zod';

export type ErrorCode =
  | 'bad_request'
  | 'malformed_json'
  | 'validation'
  | 'unauthenticated'
  | 'forbidden'
  | 'csrf'
  | 'https_required'
  | 'not_found'
  | 'conflict'
  | 'too_large'
  | 'unsupported_type'
  | 'unprocessable'
  | 'rate_limited'
  | 'unavailable'
  | 'internal';

/** An error with an HTTP status and a stable code, answered as JSON. */
export class HttpError extends Error {
  constructor(
    public status: number,
    public code: ErrorCode,
    message: string,
    public fields?: Record<string, string>,
    /** Sent as Retry-After (seconds) with a 429 or 503. */
    public retryAfterSeconds?: number,
  ) {
    super(message);
  }
}

export const notFound = (what = 'Not found') => new HttpError(404, 'not_found', what);
export const forbidden = (message = 'Your role does not allow this') => new HttpError(403, 'forbidden', message);
export const conflict = (message: string, fields?: Record<string, string>) => new HttpError(409, 'conflict', message, fields);
export const unprocessable = (message: string, fields?: Record<string, string>) =>
  new HttpError(422, 'unprocessable', message, fields);

/** Turns zod issues into { "field.path": "message" } (first message per field). */
export function fieldsFromZod(error: z.ZodError): Record<string, string> {
  const fields: Record<string, string> = {};
  for (const issue of error.issues) {
    if (issue.code === 'unrecognized_keys') {
      for (const key of issue.keys) {
        const path = [...issue.path, key].join('.');
        fields[path] ??= 'Unknown field';
      }
      continue;
    }
    const path = issue.path.length ? issue.path.join('.') : '_';
    fields[path] ??= issue.message;
  }
  return fields;
}

/** Parses input with a shared zod schema or throws a 400 naming each bad field. */
export function parse<S extends z.ZodType>(schema: S, input: unknown, where = 'body'): z.infer<S> {
  const result = schema.safeParse(input);
  if (!result.success) {
    const fields = fieldsFromZod(result.error);
    const names = Object.keys(fields).join(', ');
    throw new HttpError(400, 'validation', `Invalid ${where}: check ${names}`, fields);
  }
  return result.data;
}

/** A numeric id in the path: anything else is simply not found. */
export function idParam(value: unknown): number {
  const s = String(value);
  if (!/^[1-9][0-9]{0,15}$/.test(s)) throw notFound();
  return Number(s);
}

export const apiNotFound: RequestHandler = (_req, _res, next) => next(notFound('No such API route'));

/** Error codes (mysql2 and the OS) that mean the database cannot be reached right now, not that the request was bad. */
const DATABASE_GONE = new Set([
  'ECONNREFUSED',
  'ECONNRESET',
  'ETIMEDOUT',
  'EPIPE',
  'ENOENT', // the socket file is missing while the server restarts
  'PROTOCOL_CONNECTION_LOST',
  'PROTOCOL_SEQUENCE_TIMEOUT',
  'ER_SERVER_SHUTDOWN',
  'ER_CON_COUNT_ERROR',
  'ER_CONNECTION_KILLED',
  'ER_CLIENT_INTERACTION_TIMEOUT',
  'ER_UNKNOWN_COM_ERROR', // a Galera node outside the primary component: "WSREP has not yet prepared node for application use"
]);

/** True when `err` (or the error a query builder wrapped) says the database went away. */
export function databaseUnavailable(err: unknown): boolean {
  for (let e = err as { code?: string; fatal?: boolean; message?: string; cause?: unknown } | undefined, depth = 0; e && depth < 4; e = e.cause as typeof e, depth++) {
    if (e.code && DATABASE_GONE.has(e.code)) return true;
    if (typeof e.message === 'string' && /connection is in closed state|Pool is closed/i.test(e.message)) return true;
  }
  return false;
}

function isDeadlockError(err: unknown): boolean {
  for (let e = err as { errno?: number; cause?: unknown } | undefined, d = 0; e && d < 4; e = e.cause as typeof e, d++) if (e.errno === 1213) return true;
  return false;
}

/** Seconds a client is asked to wait when the database is unreachable. */
export const DATABASE_RETRY_SECONDS = 5;

export function errorHandler(log: (msg: string, err?: unknown) => void): ErrorRequestHandler {
  return (err, req, res, _next) => {
    let e: HttpError;
    if (err instanceof HttpError) e = err;
    // The file store (server/files): down or refusing means 503 for file routes only; a missing object 404.
    else if (err?.name === 'StoreUnavailable') {
      log(`File store unavailable on ${req.method} ${req.originalUrl}: answered 503`, (err as Error)?.message);
      e = new HttpError(503, 'unavailable', 'The file store is not answering right now; try again in a few seconds', undefined, DATABASE_RETRY_SECONDS);
    } else if (err?.name === 'FileMissing') e = new HttpError(404, 'not_found', 'The file is missing from storage');
    else if (databaseUnavailable(err)) {
      log(`Database unreachable on ${req.method} ${req.originalUrl}: answered 503`, (err as Error)?.message);
      e = new HttpError(503, 'unavailable', 'The database is not answering right now; try again in a few seconds', undefined, DATABASE_RETRY_SECONDS);
    }
    // Still a deadlock after the retries in server/db/client.ts: the same rows are being changed from elsewhere.
    else if (isDeadlockError(err)) {
      log(`Deadlock after retries on ${req.method} ${req.originalUrl}: answered 503`, (err as Error)?.message);
      e = new HttpError(503, 'unavailable', 'These records are being changed by others right now; try again in a moment', undefined, 1);
    } else if (err?.type === 'entity.parse.failed') e = new HttpError(400, 'malformed_json', 'The request body is not valid JSON');
    else if (err?.type === 'entity.too.large') e = new HttpError(413, 'too_large', 'The request body is too large');
    else if (err?.type === 'encoding.unsupported' || err?.type === 'charset.unsupported')
      e = new HttpError(415, 'unsupported_type', 'Unsupported body encoding');
    else if (err instanceof z.ZodError) e = new HttpError(400, 'validation', 'Invalid input', fieldsFromZod(err));
    // The router could not decode a %-escape in the path ('%zz', '%ED%A0%80'): it marks the error 400.
    else if (err instanceof URIError && (err as URIError & { status?: number }).status === 400)
      e = new HttpError(400, 'bad_request', 'The address contains a %-escape that does not decode to text');
    else {
      log(`Unhandled error on ${req.method} ${req.originalUrl}`, err);
      e = new HttpError(500, 'internal', 'Something went wrong on our side; it has been logged');
    }
    if (res.headersSent) return;
    if (e.retryAfterSeconds) res.set('Retry-After', String(e.retryAfterSeconds));
    res.status(e.status).json({ error: { code: e.code, message: e.message, ...(e.fields ? { fields: e.fields } : {}) } });
  };
}
