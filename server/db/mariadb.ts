/**
 * Launches a private MariaDB server for this project: its own data dir, socket,
 * port on 127.0.0.1, utf8mb4 and UTC. Used by `npm start` (durable) and by the
 * test setup (throwaway, fast settings). Stops cleanly on request.
 */
import { spawn, execFile, type ChildProcess } from 'node:child_process';
import { chmodSync, existsSync, mkdirSync, readFileSync, writeFileSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { randomBytes } from 'node:crypto';
import { userInfo } from 'node:os';
import { join, resolve } from 'node:path';
import { promisify } from 'node:util';
import mysql from 'mysql2/promise';

const run = promisify(execFile);

export interface LaunchOptions {
  /** Folder that holds data/, the socket, pid file and log. */
  baseDir: string;
  /** Fixed port; a free one is picked when omitted. */
  port?: number;
  /** Test-only speed settings: never for the start command. */
  fast?: boolean;
  database: string;
  log?: (line: string) => void;
}

export interface ConnectionTarget {
  host?: string;
  port?: number;
  socketPath?: string;
  user: string;
  password: string;
  database: string;
}

export interface LaunchedMariaDb {
  /** Privileged connection over the socket (migrations, grants, test setup): the OS user, by socket authentication. */
  admin: ConnectionTarget;
  /** The app's own account over TCP on 127.0.0.1. */
  app: ConnectionTarget;
  port: number;
  /** The running mariadbd's process id (it changes when the launcher restarts a server that died). */
  pid(): number | undefined;
  /** How many times the launcher restarted a server that died. */
  restarts(): number;
  stop(): Promise<void>;
}

const SEARCH_PATH = ['/usr/sbin', '/usr/bin', '/usr/local/sbin', '/usr/local/bin'];

function findBinary(name: string): string | null {
  const dirs = [...(process.env.PATH ?? '').split(':'), ...SEARCH_PATH];
  for (const dir of dirs) {
    if (dir && existsSync(join(dir, name))) return join(dir, name);
  }
  return null;
}

/** Installs MariaDB from Debian's packages when it is missing (as root), or explains how. */
export async function ensureMariaDbInstalled(log: (line: string) => void = console.log): Promise<void> {
  if (findBinary('mariadbd') && findBinary('mariadb-install-db') && findBinary('mariadb-admin')) return;
  const command = 'apt-get update && apt-get install -y mariadb-server mariadb-client';
  if (process.getuid?.() !== 0) {
    throw new Error(`MariaDB is not installed. Install it once with:\n  sudo sh -c '${command}'\nor set DATABASE_URL to an existing server.`);
  }
  log('MariaDB is missing: installing mariadb-server and mariadb-client with apt-get ...');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  await run('apt-get', ['update', '-qq'], { env, maxBuffer: 64 * 1024 * 1024 });
  await run('apt-get', ['install', '-y', '-qq', 'mariadb-server', 'mariadb-client'], { env, maxBuffer: 64 * 1024 * 1024 });
  if (!findBinary('mariadbd')) throw new Error('apt-get finished but mariadbd is still missing');
}

export async function freePort(): Promise<number> {
  return new Promise((resolvePort, reject) => {
    const srv = createServer();
    srv.unref();
    srv.on('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const addr = srv.address();
      srv.close(() => (typeof addr === 'object' && addr ? resolvePort(addr.port) : reject(new Error('no port'))));
    });
  });
}

function sleep(ms: number) {
  return new Promise((r) => setTimeout(r, ms));
}

/** The OS account running us: MariaDB's socket authentication maps it to the database account of the same name. */
const OS_USER = userInfo().username;

async function ping(socket: string): Promise<boolean> {
  try {
    await run(findBinary('mariadb-admin')!, ['--no-defaults', '-S', socket, `-u${OS_USER}`, '--connect-timeout=2', 'ping'], { timeout: 5000 });
    return true;
  } catch {
    return false;
  }
}

function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

async function shutdown(socket: string, pidFile: string, child?: ChildProcess): Promise<void> {
  const pid = existsSync(pidFile) ? Number(readFileSync(pidFile, 'utf8').trim()) : child?.pid;
  try {
    await run(findBinary('mariadb-admin')!, ['--no-defaults', '-S', socket, `-u${OS_USER}`, 'shutdown'], { timeout: 30_000 });
  } catch {
    if (pid && processAlive(pid)) process.kill(pid, 'SIGTERM');
  }
  const deadline = Date.now() + 30_000;
  while (pid && processAlive(pid) && Date.now() < deadline) await sleep(50);
  if (pid && processAlive(pid)) process.kill(pid, 'SIGKILL');
}

/** Starts (initialising on first use) a private MariaDB under baseDir. */
export async function launchMariaDb(opts: LaunchOptions): Promise<LaunchedMariaDb> {
  const log = opts.log ?? (() => {});
  await ensureMariaDbInstalled(log);
  const baseDir = resolve(opts.baseDir);
  const dataDir = join(baseDir, 'data');
  const socket = join(baseDir, 'mariadb.sock');
  const pidFile = join(baseDir, 'mariadb.pid');
  const logFile = join(baseDir, 'mariadb.err');
  const credFile = join(baseDir, 'app-account.json');
  // A private temp dir: servers sharing /tmp can collide on temporary table names.
  const tmpDir = join(baseDir, 'tmp');
  mkdirSync(tmpDir, { recursive: true });

  // A server left running by a killed earlier start still holds the data dir: stop it first.
  if (existsSync(pidFile)) {
    const pid = Number(readFileSync(pidFile, 'utf8').trim());
    if (pid && processAlive(pid)) {
      log(`Stopping a MariaDB left running from an earlier start (pid ${pid}) ...`);
      await shutdown(socket, pidFile);
    }
    rmSync(pidFile, { force: true });
  }

  if (!existsSync(join(dataDir, 'mysql'))) {
    log(`Creating a private MariaDB data dir in ${dataDir} ...`);
    mkdirSync(dataDir, { recursive: true });
    // Socket authentication (the default): root, and the OS user running us, sign in over the socket only;
    // nobody signs in as root over TCP, and there are no anonymous accounts.
    await run(findBinary('mariadb-install-db')!, [
      '--no-defaults',
      `--datadir=${dataDir}`,
      `--user=${OS_USER}`,
      '--skip-test-db',
      '--skip-name-resolve',
      `--tmpdir=${tmpDir}`,
    ], { maxBuffer: 16 * 1024 * 1024 });
  }

  const port = opts.port ?? (await freePort());
  const args = [
    '--no-defaults',
    `--datadir=${dataDir}`,
    `--socket=${socket}`,
    `--pid-file=${pidFile}`,
    `--port=${port}`,
    '--bind-address=127.0.0.1',
    '--skip-name-resolve',
    '--skip-log-bin',
    `--log-error=${logFile}`,
    `--tmpdir=${tmpDir}`,
    '--character-set-server=utf8mb4',
    '--collation-server=utf8mb4_unicode_ci',
    '--default-time-zone=+00:00',
    '--max-connections=500',
  ];
  if (opts.fast) {
    args.push('--innodb-flush-log-at-trx-commit=0', '--skip-innodb-doublewrite', '--innodb-buffer-pool-size=64M');
  } else {
    args.push('--innodb-flush-log-at-trx-commit=1');
  }
  if (process.getuid?.() === 0) args.push('--user=root');

  let stopping = false;
  let restarts = 0;
  let child: ChildProcess;
  let startedAt = 0;
  const start = async () => {
    const c = spawn(findBinary('mariadbd')!, args, { stdio: 'ignore' });
    child = c;
    startedAt = Date.now();
    let exited = false;
    c.on('exit', (code, signal) => {
      exited = true;
      if (stopping || child !== c) return;
      // The launcher owns this server: if it dies, start it again (the app reconnects by itself).
      const wait = Date.now() - startedAt < 10_000 ? Math.min(30_000, 1000 * 2 ** Math.min(restarts, 5)) : 1000;
      log(`MariaDB (pid ${c.pid}) exited unexpectedly (${signal ?? `code ${code}`}); restarting it in ${Math.round(wait / 1000)} s`);
      setTimeout(() => {
        if (stopping) return;
        restarts++;
        start()
          .then(() => log(`MariaDB restarted (pid ${child.pid})`))
          .catch((err: Error) => log(`MariaDB could not be restarted: ${err.message}`));
      }, wait).unref();
    });
    const deadline = Date.now() + 60_000;
    while (!(await ping(socket))) {
      if (exited) throw new Error(`MariaDB exited during start-up; see ${logFile}`);
      if (Date.now() > deadline) throw new Error(`MariaDB did not answer within 60 s; see ${logFile}`);
      await sleep(100);
    }
  };
  await start();

  // The app gets its own account; the password lives beside the data (git-ignored, readable by us alone).
  let appPassword: string;
  if (existsSync(credFile)) {
    appPassword = JSON.parse(readFileSync(credFile, 'utf8')).password;
    chmodSync(credFile, 0o600);
  } else {
    appPassword = randomBytes(18).toString('base64url');
    writeFileSync(credFile, JSON.stringify({ user: 'keepwell_app', password: appPassword }), { mode: 0o600 });
  }
  const admin: ConnectionTarget = { socketPath: socket, user: OS_USER, password: '', database: opts.database };
  const conn = await adminConnection(socket);
  try {
    await lockDownAccounts(conn, log);
    await conn.query(`CREATE DATABASE IF NOT EXISTS \`${opts.database}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
    for (const host of ['127.0.0.1', 'localhost']) {
      await conn.query(`CREATE USER IF NOT EXISTS 'keepwell_app'@'${host}' IDENTIFIED BY ?`, [appPassword]);
      await conn.query(`ALTER USER 'keepwell_app'@'${host}' IDENTIFIED BY ?`, [appPassword]);
    }
  } finally {
    await conn.end();
  }

  return {
    admin,
    app: { host: '127.0.0.1', port, user: 'keepwell_app', password: appPassword, database: opts.database },
    port,
    pid: () => child.pid,
    restarts: () => restarts,
    async stop() {
      if (stopping) return;
      stopping = true;
      await shutdown(socket, pidFile, child);
    },
  };
}

/**
 * A privileged connection over the socket as the OS user (socket authentication). A data folder made
 * by an earlier Keepwell, whose root had an empty password, is reached as that root once, and then
 * locked down by lockDownAccounts.
 */
async function adminConnection(socket: string): Promise<mysql.Connection> {
  try {
    return await mysql.createConnection({ socketPath: socket, user: OS_USER, password: '' });
  } catch (err) {
    if (OS_USER === 'root') throw err;
    return mysql.createConnection({ socketPath: socket, user: 'root', password: '' });
  }
}

/**
 * Root and the OS user by socket authentication only; no root over TCP, no anonymous accounts, no
 * account with an empty password. Runs at every start, so a data folder from an earlier version is
 * mended too.
 */
async function lockDownAccounts(conn: mysql.Connection, log: (line: string) => void): Promise<void> {
  if (OS_USER !== 'root') {
    await conn.query(`CREATE USER IF NOT EXISTS ?@'localhost' IDENTIFIED VIA unix_socket`, [OS_USER]);
    await conn.query(`GRANT ALL PRIVILEGES ON *.* TO ?@'localhost' WITH GRANT OPTION`, [OS_USER]);
  }
  const [rows] = await conn.query<mysql.RowDataPacket[]>(
    `SELECT user, host, JSON_VALUE(priv, '$.plugin') AS plugin, JSON_VALUE(priv, '$.authentication_string') AS auth,
            JSON_EXISTS(priv, '$.auth_or') AS alternatives
       FROM mysql.global_priv`,
  );
  for (const r of rows as { user: string; host: string; plugin: string | null; auth: string | null; alternatives: number }[]) {
    const who = `'${r.user.replace(/'/g, "''")}'@'${r.host.replace(/'/g, "''")}'`;
    if (r.user === '' || (r.user === 'root' && r.host !== 'localhost')) {
      await conn.query(`DROP USER ${who}`);
      log(`MariaDB: removed the account ${who} (anonymous or root over the network)`);
    } else if (r.user === 'root' && (r.plugin === 'mysql_native_password' || r.plugin === null) && !r.auth && !r.alternatives) {
      await conn.query(`ALTER USER 'root'@'localhost' IDENTIFIED VIA unix_socket`);
      log('MariaDB: root now signs in by socket authentication only (it had an empty password)');
    }
  }
}
