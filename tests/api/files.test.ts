/**
 * The file store (server/files): the same behaviour from the folder and from an S3 bucket (s3rver),
 * the start-up check's messages, and `npm run storage:copy` from folder to bucket and back, resumable,
 * each file's SHA-256 checked.
 */
import { execFile } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import { mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { promisify } from 'node:util';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { copyFiles } from '../../server/files/copy';
import { FileMissing, folderStore, readAll, s3Store, StoreUnavailable, type FileStore } from '../../server/files';
import { testBucket } from '../helpers/app';

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');
const temp: string[] = [];
const tempDir = () => {
  const d = mkdtempSync(join(tmpdir(), 'kw-files-'));
  temp.push(d);
  return d;
};
afterAll(() => {
  for (const d of temp) rmSync(d, { recursive: true, force: true });
});

const keysOf = async (store: FileStore, prefix = '') => {
  const keys: string[] = [];
  for await (const o of store.list(prefix)) keys.push(o.key);
  return keys.sort();
};

describe.each([
  ['folder', async () => folderStore(tempDir())],
  ['s3', () => testBucket()],
] as const)('the %s store', (_kind, make) => {
  it('writes, reads as a stream, heads, lists and deletes; a missing key is FileMissing or null', async () => {
    const store = await make();
    await store.check();
    const bytes = randomBytes(300_000);
    await store.put('photos/a.jpg', bytes, { contentType: 'image/jpeg' });
    await store.put('chamber-logs/1/b.csv', Readable.from([Buffer.from('time,temp\n'), Buffer.from('2026-01-01 00:00,25\n')]), { size: 30 });
    expect(sha256(await readAll(store, 'photos/a.jpg'))).toBe(sha256(bytes));
    expect((await readAll(store, 'chamber-logs/1/b.csv')).toString()).toBe('time,temp\n2026-01-01 00:00,25\n');
    expect(await store.head('photos/a.jpg')).toMatchObject({ size: 300_000 });
    expect(await store.head('photos/none.jpg')).toBeNull();
    await expect(store.get('photos/none.jpg')).rejects.toBeInstanceOf(FileMissing);
    expect(await keysOf(store)).toEqual(['chamber-logs/1/b.csv', 'photos/a.jpg']);
    expect(await keysOf(store, 'photos/')).toEqual(['photos/a.jpg']);
    await store.delete('photos/a.jpg');
    await store.delete('photos/a.jpg'); // a missing one is no error
    expect(await store.head('photos/a.jpg')).toBeNull();
    // Keys are made by the app: a dot segment is a bug and never reaches the disk or the bucket.
    await expect(store.put('photos/../x', bytes)).rejects.toThrow(/Invalid file key/);
  });
});

describe('start-up check of a bucket', () => {
  const servers: Server[] = [];
  afterAll(async () => {
    for (const s of servers) await new Promise((r) => s.close(r));
  });

  /** An S3-compatible server that lets the bucket be seen but refuses writes, as a read-only key would. */
  async function readOnlyStore(): Promise<string> {
    const server = createServer((req, res) => {
      req.resume();
      if (req.method === 'HEAD') return void res.writeHead(200).end();
      res.writeHead(403, { 'Content-Type': 'application/xml' });
      res.end('<?xml version="1.0" encoding="UTF-8"?><Error><Code>AccessDenied</Code><Message>Access Denied</Message></Error>');
    });
    servers.push(server);
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    return `http://127.0.0.1:${(server.address() as { port: number }).port}`;
  }

  it('names the bucket and the permission it lacks', async () => {
    const endpoint = await readOnlyStore();
    const store = s3Store({ bucket: 'lab-photos', endpoint, forcePathStyle: true, credentials: { accessKeyId: 'k', secretAccessKey: 's' } });
    await expect(store.check()).rejects.toThrow(/refused s3:PutObject \(access denied\).*"lab-photos"/);
  });

  it('names a bucket that does not exist', async () => {
    const s3 = inject('s3');
    const store = s3Store({ bucket: 'no-such-bucket', endpoint: s3.endpoint, forcePathStyle: true, credentials: { accessKeyId: s3.accessKeyId, secretAccessKey: s3.secretAccessKey } });
    await expect(store.check()).rejects.toThrow('The bucket "no-such-bucket" does not exist');
  });

  it('says when the store does not answer at all, and a request then fails as unavailable', async () => {
    const store = s3Store({ bucket: 'lab-photos', endpoint: 'http://127.0.0.1:9', forcePathStyle: true, credentials: { accessKeyId: 'k', secretAccessKey: 's' } });
    await expect(store.check()).rejects.toThrow(/did not answer.*check S3_ENDPOINT/);
    await expect(store.get('photos/a.jpg')).rejects.toBeInstanceOf(StoreUnavailable);
  });
});

describe('storage:copy', () => {
  /** A folder laid out as the app writes it: photos with their copies, and a chamber-log CSV. */
  function uploadsFolder(): { dir: string; files: Record<string, Buffer> } {
    const dir = tempDir();
    const files: Record<string, Buffer> = {};
    for (let i = 0; i < 4; i++) {
      const base = randomBytes(16).toString('hex');
      files[`photos/${base}.jpg`] = randomBytes(20_000 + i);
      files[`photos/${base}.thumb.webp`] = randomBytes(2_000 + i);
      files[`photos/${base}.display.webp`] = randomBytes(8_000 + i);
    }
    files['chamber-logs/1/0b9f2c1e-5d7a-4c55-9a57-2f1f4a7c3e10.csv'] = Buffer.from('time,temp\n2026-01-01 00:00,25.0\n');
    for (const [k, b] of Object.entries(files)) {
      mkdirSync(join(dir, ...k.split('/').slice(0, -1)), { recursive: true });
      writeFileSync(join(dir, ...k.split('/')), b);
    }
    return { dir, files };
  }

  it('copies the folder to a bucket and back, every file with the same SHA-256, and resumes after a stop', async () => {
    const { dir, files } = uploadsFolder();
    const total = Object.keys(files).length;
    const folder = folderStore(dir);
    const bucket = await testBucket();

    // A run that stops after 5 files (the store stops answering).
    let puts = 0;
    const flaky: FileStore = {
      ...bucket,
      put: async (key, body, opts) => {
        if (++puts > 5) throw new StoreUnavailable('gone');
        return bucket.put(key, body, opts);
      },
    };
    await expect(copyFiles(folder, flaky)).rejects.toBeInstanceOf(StoreUnavailable);
    expect((await keysOf(bucket)).length).toBe(5);
    // One of those copies damaged since: same name, other bytes.
    const damaged = Object.keys(files).sort()[2];
    await bucket.put(damaged, Buffer.from('not the photo'));

    const second = await copyFiles(folder, bucket);
    expect(second).toEqual({ copied: total - 4, skipped: 4, failed: [], removed: 0 });
    for (const [k, b] of Object.entries(files)) expect(sha256(await readAll(bucket, k)), k).toBe(sha256(b));
    // Nothing left to do.
    expect(await copyFiles(folder, bucket)).toMatchObject({ copied: 0, skipped: total });

    // And back into an empty folder, as a move.
    const back = folderStore(tempDir());
    expect(await copyFiles(bucket, back, { removeSource: true })).toEqual({ copied: total, skipped: 0, failed: [], removed: total });
    for (const [k, b] of Object.entries(files)) expect(sha256(await readAll(back, k)), k).toBe(sha256(b));
    expect(await keysOf(bucket)).toEqual([]);
  });

  it('runs as npm run storage:copy with the S3 settings', async () => {
    const { dir, files } = uploadsFolder();
    const dataDir = tempDir();
    // DATA_DIR/uploads is the folder the app uses.
    renameSync(dir, join(dataDir, 'uploads'));
    const bucket = await testBucket();
    const s3 = inject('s3');
    const env = {
      ...process.env,
      DATA_DIR: dataDir,
      S3_BUCKET: bucket.description.match(/"([^"]+)"/)![1],
      S3_ENDPOINT: s3.endpoint,
      S3_FORCE_PATH_STYLE: 'true',
      AWS_ACCESS_KEY_ID: s3.accessKeyId,
      AWS_SECRET_ACCESS_KEY: s3.secretAccessKey,
      AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED: 'true',
    };
    const { stdout } = await promisify(execFile)('node', ['--import', 'tsx', 'server/files/copy-cli.ts', '--to', 's3'], { env });
    expect(stdout).toContain(`${Object.keys(files).length} copied, 0 already there with the same SHA-256, 0 failed`);
    const key = Object.keys(files)[0];
    expect(sha256(await readAll(bucket, key))).toBe(sha256(readFileSync(join(dataDir, 'uploads', ...key.split('/')))));
  });
});
