/**
 * Stored files in an S3-compatible bucket through the AWS SDK for JavaScript v3. Credentials come from
 * the SDK's usual sources (AWS_ACCESS_KEY_ID / AWS_SECRET_ACCESS_KEY, a profile, an instance role).
 * The bucket stays private: the app streams each object to the member after its own lab check.
 */
import { randomBytes } from 'node:crypto';
import { Readable } from 'node:stream';
import {
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  HeadObjectCommand,
  ListObjectsV2Command,
  PutObjectCommand,
  S3Client,
} from '@aws-sdk/client-s3';
import { assertKey, FileMissing, StoreUnavailable, type FileStore, type PutOptions, type StoredObject } from './store';

export interface S3Settings {
  bucket: string;
  /** e.g. http://127.0.0.1:9000 for a local or self-hosted store; omit for AWS itself. */
  endpoint?: string;
  region?: string;
  forcePathStyle?: boolean;
  /** Only for tests and tools; normally the SDK's own credential chain. */
  credentials?: { accessKeyId: string; secretAccessKey: string };
  /** Milliseconds to wait for a connection (a down store answers 503 after this). */
  connectionTimeoutMs?: number;
}

const statusOf = (err: unknown) => (err as { $metadata?: { httpStatusCode?: number } })?.$metadata?.httpStatusCode;
const nameOf = (err: unknown) => (err as { name?: string; Code?: string })?.name ?? (err as { Code?: string })?.Code;

function isMissing(err: unknown): boolean {
  const n = nameOf(err);
  return n === 'NoSuchKey' || n === 'NotFound' || (statusOf(err) === 404 && n !== 'NoSuchBucket');
}

export function s3Store(s: S3Settings): FileStore {
  const client = new S3Client({
    region: s.region ?? 'us-east-1',
    ...(s.endpoint ? { endpoint: s.endpoint } : {}),
    forcePathStyle: s.forcePathStyle ?? false,
    ...(s.credentials ? { credentials: s.credentials } : {}),
    // Checksums only where S3 requires them: several S3-compatible servers refuse the SDK's default CRC32 trailers.
    requestChecksumCalculation: 'WHEN_REQUIRED',
    responseChecksumValidation: 'WHEN_REQUIRED',
    maxAttempts: 2,
    requestHandler: { connectionTimeout: s.connectionTimeoutMs ?? 3000, requestTimeout: 60_000 },
  });
  const where = `bucket "${s.bucket}"${s.endpoint ? ` at ${s.endpoint}` : ''}`;
  const unavailable = (what: string, err: unknown) =>
    new StoreUnavailable(`The object store (${where}) did not ${what}: ${nameOf(err) ?? ''} ${(err as Error)?.message ?? ''}`.trim(), { cause: err });

  return {
    kind: 's3',
    description: where,

    async put(key: string, body: Buffer | Readable, opts?: PutOptions & { size?: number }) {
      assertKey(key);
      try {
        await client.send(
          new PutObjectCommand({
            Bucket: s.bucket,
            Key: key,
            Body: body,
            ...(Buffer.isBuffer(body) ? { ContentLength: body.length } : opts?.size != null ? { ContentLength: opts.size } : {}),
            ...(opts?.contentType ? { ContentType: opts.contentType } : {}),
            ...(opts?.sha256 ? { Metadata: { sha256: opts.sha256 } } : {}),
          }),
        );
      } catch (err) {
        throw unavailable('store a file', err);
      }
    },

    async get(key: string) {
      assertKey(key);
      try {
        const out = await client.send(new GetObjectCommand({ Bucket: s.bucket, Key: key }));
        const body = out.Body as Readable | undefined;
        if (!body) throw new FileMissing(key);
        return { body: body instanceof Readable ? body : Readable.from(body as AsyncIterable<Uint8Array>), size: Number(out.ContentLength ?? 0), contentType: out.ContentType, sha256: out.Metadata?.sha256 };
      } catch (err) {
        if (err instanceof FileMissing || isMissing(err)) throw new FileMissing(key);
        throw unavailable('answer', err);
      }
    },

    async head(key: string): Promise<StoredObject | null> {
      assertKey(key);
      try {
        const out = await client.send(new HeadObjectCommand({ Bucket: s.bucket, Key: key }));
        return { size: Number(out.ContentLength ?? 0), contentType: out.ContentType, sha256: out.Metadata?.sha256 };
      } catch (err) {
        if (isMissing(err)) return null;
        throw unavailable('answer', err);
      }
    },

    async delete(key: string) {
      assertKey(key);
      try {
        await client.send(new DeleteObjectCommand({ Bucket: s.bucket, Key: key }));
      } catch (err) {
        if (isMissing(err)) return;
        throw unavailable('delete a file', err);
      }
    },

    async *list(prefix: string) {
      let token: string | undefined;
      do {
        let out;
        try {
          out = await client.send(new ListObjectsV2Command({ Bucket: s.bucket, Prefix: prefix, ContinuationToken: token }));
        } catch (err) {
          throw unavailable('list files', err);
        }
        for (const o of out.Contents ?? []) if (o.Key) yield { key: o.Key, size: Number(o.Size ?? 0) };
        token = out.IsTruncated ? out.NextContinuationToken : undefined;
      } while (token);
    },

    async check() {
      const fail = (permission: string, err: unknown): never => {
        const status = statusOf(err);
        const why = status === 403 || nameOf(err) === 'AccessDenied' ? 'access denied' : `${nameOf(err) ?? 'error'}${status ? ` (HTTP ${status})` : ''}`;
        throw new Error(
          `The object store ${where} refused ${permission} (${why}). Give the app's credentials ${permission} on the bucket "${s.bucket}", or check S3_BUCKET, S3_ENDPOINT and S3_REGION.`,
          { cause: err },
        );
      };
      try {
        await client.send(new HeadBucketCommand({ Bucket: s.bucket }));
      } catch (err) {
        if (statusOf(err) === 404 || nameOf(err) === 'NoSuchBucket' || nameOf(err) === 'NotFound') {
          throw new Error(`The bucket "${s.bucket}" does not exist (${where}): create it, or set S3_BUCKET to an existing one.`, { cause: err });
        }
        if (statusOf(err) === undefined) throw new Error(`The object store ${where} did not answer (${nameOf(err)}: ${(err as Error).message}): check S3_ENDPOINT.`, { cause: err });
        fail('s3:ListBucket', err);
      }
      const probe = `keepwell-check/${randomBytes(8).toString('hex')}`;
      try {
        await client.send(new PutObjectCommand({ Bucket: s.bucket, Key: probe, Body: 'ok', ContentLength: 2 }));
      } catch (err) {
        fail('s3:PutObject', err);
      }
      try {
        const out = await client.send(new GetObjectCommand({ Bucket: s.bucket, Key: probe }));
        for await (const _ of (out.Body as Readable | undefined) ?? []) void _;
      } catch (err) {
        fail('s3:GetObject', err);
      }
      try {
        await client.send(new DeleteObjectCommand({ Bucket: s.bucket, Key: probe }));
      } catch (err) {
        fail('s3:DeleteObject', err);
      }
    },

    close() {
      client.destroy();
    },
  };
}
