/**
 * The per-address sign-in and reset limits are counted in MariaDB (server/http/rate-limit-store.ts),
 * so two app instances on one database give an address the allowance of one.
 */
import express from 'express';
import supertest from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app';
import { loadConfig } from '../../server/config';
import { rateLimits } from '../../server/db/schema';
import { errorHandler } from '../../server/http/errors';
import { createLogger } from '../../server/log';
import { accountRoutes } from '../../server/routes/account';
import { accountWorkSettled } from '../../server/routes/account';
import { Client, createTestApp, type TestApp } from '../helpers/app';

let t: TestApp;
let second: ReturnType<typeof createApp>;

beforeAll(async () => {
  t = await createTestApp({ signInIpLimit: 5, signInIpWindowMs: 60_000 });
  // A second instance of the app on the same database, as behind a load balancer.
  second = createApp({
    db: t.db,
    pool: t.pool,
    config: loadConfig({ NODE_ENV: 'test' }),
    log: createLogger(true),
    sessionSecret: 'test-secret-that-is-long-enough',
    serveClient: false,
    signInIpLimit: 5,
    signInIpWindowMs: 60_000,
    files: t.files,
  });
});
afterAll(async () => {
  await second?.close();
  await t?.close();
});

const wrong = (c: Client, i: number) => c.post('/api/auth/sign-in', { email: `nobody${i}@larkspur.example`, password: 'not the password at all' });

describe('limits shared by every instance', () => {
  it('gives an address 5 failed sign-ins across two instances, not 5 on each', async () => {
    await t.db.delete(rateLimits);
    const a = t.client();
    const b = new Client(second.app);
    const statuses = [];
    for (let i = 0; i < 3; i++) statuses.push((await wrong(a, i)).status);
    for (let i = 3; i < 6; i++) statuses.push((await wrong(b, i)).status);
    statuses.push((await wrong(a, 6)).status);
    expect(statuses).toEqual([401, 401, 401, 401, 401, 429, 429]);
  });

  it('counts 20 failed sign-ins sent at once to both instances atomically: exactly 5 are checked', async () => {
    await t.db.delete(rateLimits);
    const a = t.client();
    const b = new Client(second.app);
    const res = await Promise.all(Array.from({ length: 20 }, (_, i) => wrong(i % 2 ? b : a, 100 + i)));
    const statuses = res.map((r) => r.status);
    expect(statuses.filter((s) => s === 401)).toHaveLength(5);
    expect(statuses.filter((s) => s === 429)).toHaveLength(15);
  });

  it('shares the "forgot password" limit per address between instances', async () => {
    await t.db.delete(rateLimits);
    const mini = () => {
      const app = express();
      app.use(express.json());
      app.use(accountRoutes({ db: t.db, config: loadConfig({ NODE_ENV: 'test' }), log: createLogger(true), resetIpLimit: 3 }));
      app.use(errorHandler(() => undefined));
      return supertest(app);
    };
    const [a, b] = [mini(), mini()];
    const codes: number[] = [];
    for (const [i, app] of [a, b, a, b, a].entries()) codes.push((await app.post('/password-resets').send({ email: `someone${i}@example.com` })).status);
    expect(codes).toEqual([202, 202, 202, 429, 429]);
    await accountWorkSettled();
  });
});
