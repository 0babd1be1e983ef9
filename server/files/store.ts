/**
 * Stored files (photos and their copies, chamber-log CSVs) behind one interface, so the app can keep
 * them in a local folder (one machine) or in an S3-compatible bucket (any number of instances).
 * Keys are slash-separated paths such as `photos/3f2a....jpg`; the app serves every file itself, after
 * the lab check, never from a public URL.
 */
import { createHash } from 'node:crypto';
import type { Readable } from 'node:stream';

export interface StoredObject {
  /** Bytes. */
  size: number;
  contentType?: string;
  /** SHA-256 (hex) recorded when the file was written through this app, when the store keeps it. */
  sha256?: string;
}

export interface PutOptions {
  contentType?: string;
  /** SHA-256 (hex) of the body, kept with the object where the store can (S3 metadata). */
  sha256?: string;
}

export interface FileStore {
  /** 'folder' or 's3', and a description for logs ("folder /srv/uploads", "bucket photos at http://..."). */
  readonly kind: 'folder' | 's3';
  readonly description: string;
  /** Writes a whole object at once: a reader never sees half of it. A stream body needs `size`. */
  put(key: string, body: Buffer | Readable, opts?: PutOptions & { size?: number }): Promise<void>;
  /** The object as a stream; throws FileMissing when there is none. */
  get(key: string): Promise<{ body: Readable } & StoredObject>;
  /** Size and type, or null when missing. */
  head(key: string): Promise<StoredObject | null>;
  /** Removes an object; a missing one is not an error. */
  delete(key: string): Promise<void>;
  /** Every key under a prefix, in no particular order (storage:copy). */
  list(prefix: string): AsyncIterable<{ key: string; size: number }>;
  /**
   * Start-up check: the store is reachable and allows what the app needs (write, read, delete).
   * Throws an Error whose message names the bucket or folder and the missing permission.
   */
  check(): Promise<void>;
  close?(): void;
}

/** No object under this key (answered 404). */
export class FileMissing extends Error {
  constructor(readonly key: string) {
    super(`No stored file ${key}`);
    this.name = 'FileMissing';
  }
}

/** The store did not answer or refused (answered 503; the rest of the app keeps working). */
export class StoreUnavailable extends Error {
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'StoreUnavailable';
  }
}

const KEY = /^[A-Za-z0-9_-][A-Za-z0-9._-]{0,199}(\/[A-Za-z0-9_-][A-Za-z0-9._-]{0,199}){0,4}$/;

/** Keys are made by the app; anything else (dot segments, empty parts) is a bug, not input. */
export function assertKey(key: string): void {
  if (!KEY.test(key) || key.split('/').some((p) => p === '.' || p === '..')) throw new Error(`Invalid file key ${JSON.stringify(key)}`);
}

export const photoKey = (storedName: string) => `photos/${storedName}`;
export const chamberLogKey = (labId: number, importId: string) => `chamber-logs/${labId}/${importId}.csv`;

/** Reads a whole object (small files: photos for the report, originals for display copies). */
export async function readAll(store: FileStore, key: string): Promise<Buffer> {
  const { body } = await store.get(key);
  const chunks: Buffer[] = [];
  for await (const c of body) chunks.push(c as Buffer);
  return Buffer.concat(chunks);
}

export const sha256Hex = (b: Buffer) => createHash('sha256').update(b).digest('hex');
