/**
 * Vitest global setup for API and browser tests: one throwaway MariaDB per
 * run, in a temp dir on a free port, with test-only speed settings. Each test
 * file then makes its own database in it (tests/helpers/app.ts).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { TestProject } from 'vitest/node';
import { launchMariaDb } from '../../server/db/mariadb';

export interface TestMariaDb {
  socketPath: string;
  /** The privileged account over the socket (socket authentication as the OS user). */
  adminUser: string;
  port: number;
  appUser: string;
  appPassword: string;
}

declare module 'vitest' {
  export interface ProvidedContext {
    mariadb: TestMariaDb;
  }
}

export default async function setup(project: TestProject) {
  // Prefer RAM-backed /dev/shm when present: the data is thrown away anyway.
  const base = mkdtempSync(join(process.platform === 'linux' ? '/dev/shm' : tmpdir(), 'keepwell-test-'));
  const server = await launchMariaDb({ baseDir: base, database: 'keepwell_test', fast: true });
  project.provide('mariadb', {
    socketPath: server.admin.socketPath!,
    adminUser: server.admin.user,
    port: server.port,
    appUser: server.app.user,
    appPassword: server.app.password,
  });
  return async () => {
    await server.stop();
    rmSync(base, { recursive: true, force: true });
  };
}
