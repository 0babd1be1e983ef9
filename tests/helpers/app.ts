/**
 * A real app on a real MariaDB for one test file: a fresh database with the
 * committed migrations, the app account's grants, and the demo labs.
 */
import { randomBytes } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import mysql from 'mysql2/promise';
import supertest from 'supertest';
import { inject } from 'vitest';
import { createApp, type AppDeps } from '../../server/app';
import { loadConfig } from '../../server/config';
import { createDb, createPool, type Db, type Pool } from '../../server/db/client';
import { grantAppAccount } from '../../server/db/grants';
import type { ConnectionTarget } from '../../server/db/mariadb';
import { runMigrations } from '../../server/db/migrate';
import { DEMO_PASSWORD } from '../../server/demo/people';
import { seedDemo, type SeededLab } from '../../server/demo/seed';
import { createLogger } from '../../server/log';
import { folderStore, s3Store, type FileStore } from '../../server/files';
import { CreateBucketCommand, S3Client } from '@aws-sdk/client-s3';

export { DEMO_PASSWORD };

export const DEMO = {
  owner: 'owner@larkspur.example',
  formulator: 'formulator@larkspur.example',
  technician: 'tech@larkspur.example',
  otherOwner: 'owner@copperbeech.example',
  otherTechnician: 'tech@copperbeech.example',
} as const;

/** A supertest agent that keeps its cookie and sends the CSRF header on changes. */
/** GET as raw bytes (supertest would otherwise try to read images and PDFs as text). */
export const bytesOf = (c: Client, path: string) =>
  c.agent
    .get(path)
    .buffer(true)
    .parse((r, cb) => {
      const chunks: Buffer[] = [];
      r.on('data', (b: Buffer) => chunks.push(b));
      r.on('end', () => cb(null, Buffer.concat(chunks)));
    });

export class Client {
  readonly agent: ReturnType<typeof supertest.agent>;
  constructor(app: Parameters<typeof supertest.agent>[0]) {
    this.agent = supertest.agent(app);
  }
  get(path: string) {
    return this.agent.get(path);
  }
  post(path: string, body?: object) {
    return this.agent.post(path).set('X-Keepwell-Request', '1').send(body ?? {});
  }
  patch(path: string, body: object) {
    return this.agent.patch(path).set('X-Keepwell-Request', '1').send(body);
  }
  put(path: string, body: object) {
    return this.agent.put(path).set('X-Keepwell-Request', '1').send(body);
  }
  delete(path: string) {
    return this.agent.delete(path).set('X-Keepwell-Request', '1');
  }
}

export interface TestApp {
  app: ReturnType<typeof createApp>['app'];
  db: Db;
  pool: Pool;
  admin: ConnectionTarget;
  database: string;
  labs: SeededLab[];
  /** Where this app keeps photos and chamber-log files: a temp folder, or a fresh bucket in s3rver (project api-s3). */
  files: FileStore;
  client(): Client;
  signIn(email: string, password?: string): Promise<Client>;
  close(): Promise<void>;
}

/** A new empty bucket in the run's s3rver (tests/setup/s3.ts), as the S3 file store. */
export async function testBucket(): Promise<FileStore> {
  const s3 = inject('s3');
  const bucket = `kw-${randomBytes(6).toString('hex')}`;
  const credentials = { accessKeyId: s3.accessKeyId, secretAccessKey: s3.secretAccessKey };
  const client = new S3Client({ endpoint: s3.endpoint, region: 'us-east-1', forcePathStyle: true, credentials });
  await client.send(new CreateBucketCommand({ Bucket: bucket }));
  client.destroy();
  const store = s3Store({ bucket, endpoint: s3.endpoint, forcePathStyle: true, credentials });
  await store.check();
  return store;
}

/**
 * A fresh database and app for one test file. `demo`: 'people' (default) seeds the demo labs' members
 * and starter attributes only; 'full' seeds what `npm start` shows (catalogue, studies, photos).
 */
export async function createTestApp(overrides: Partial<AppDeps> = {}, opts: { demo?: 'people' | 'full' } = {}): Promise<TestApp> {
  const m = inject('mariadb');
  const database = `kw_${randomBytes(5).toString('hex')}`;
  const admin: ConnectionTarget = { socketPath: m.socketPath, user: m.adminUser, password: '', database };
  const conn = await mysql.createConnection({ socketPath: m.socketPath, user: m.adminUser, password: '' });
  await conn.query(`CREATE DATABASE \`${database}\``);
  await conn.end();
  await runMigrations(admin);
  await grantAppAccount(admin, m.appUser);
  const pool = createPool({ host: '127.0.0.1', port: m.port, user: m.appUser, password: m.appPassword, database }, 10);
  const db = createDb(pool);
  const uploadsDir = overrides.uploadsDir ?? mkdtempSync(join(tmpdir(), 'kw-uploads-'));
  const files = overrides.files ?? (process.env.KEEPWELL_TEST_FILES === 's3' ? await testBucket() : folderStore(uploadsDir));
  const labs = opts.demo === 'full' ? await seedDemo(db, { content: 'full', files }) : await seedDemo(db);
  const { app, close } = createApp({
    db,
    pool,
    config: loadConfig({ NODE_ENV: 'test' }),
    log: createLogger(true),
    sessionSecret: 'test-secret-that-is-long-enough',
    serveClient: false,
    ...overrides,
    uploadsDir,
    files,
  });
  return {
    app,
    db,
    pool,
    admin,
    database,
    labs,
    files,
    client: () => new Client(app),
    async signIn(email, password = DEMO_PASSWORD) {
      const c = new Client(app);
      const res = await c.post('/api/auth/sign-in', { email, password });
      if (res.status !== 200) throw new Error(`sign-in as ${email} failed: ${res.status} ${JSON.stringify(res.body)}`);
      return c;
    },
    async close() {
      await close();
      await pool.end();
      const c = await mysql.createConnection({ socketPath: m.socketPath, user: m.adminUser, password: '' });
      await c.query(`DROP DATABASE IF EXISTS \`${database}\``);
      await c.end();
    },
  };
}
