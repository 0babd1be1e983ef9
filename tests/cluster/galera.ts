/**
 * A MariaDB Galera cluster on loopback ports for `npm run test:cluster`, from Debian's packages
 * (mariadb-server brings galera-4; rsync does the state transfer to joining nodes). Flags checked on
 * MariaDB 10.11 with galera-4 26.4: the first node starts with --wsrep-new-cluster, the others join
 * it and receive its data by rsync. Each node: its own data dir, socket, SQL port, group port, IST
 * and SST ports, all on 127.0.0.1. Test-only speed settings (data on /dev/shm, no fsync per commit):
 * durability here comes from the other nodes, which is what the node-kill step checks.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { chownSync, existsSync, mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { userInfo } from 'node:os';
import { execFileSync } from 'node:child_process';
import mysql from 'mysql2/promise';
import { freePort } from '../../server/db/mariadb';

export const GALERA_PROVIDER = '/usr/lib/galera/libgalera_smm.so';

export interface GaleraNode {
  index: number;
  /** SQL port on 127.0.0.1. */
  port: number;
  socket: string;
  dataDir: string;
  logFile: string;
  pid(): number | undefined;
  alive(): boolean;
  /** SIGKILL, as a crash or a pulled plug. */
  kill(): void;
  stop(): Promise<void>;
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const OS_USER = userInfo().username;

/** Installs what the cluster needs when missing (as root): mariadb-server (with galera-4) and rsync. */
export function ensureGaleraInstalled(): void {
  const missing = [
    ['/usr/sbin/mariadbd', 'mariadb-server'],
    [GALERA_PROVIDER, 'galera-4'],
    ['/usr/bin/rsync', 'rsync'],
    ['/usr/bin/mariadb', 'mariadb-client'],
  ].filter(([p]) => !existsSync(p));
  if (!missing.length) return;
  const pkgs = missing.map(([, p]) => p);
  if (process.getuid?.() !== 0) throw new Error(`Missing ${pkgs.join(', ')}: sudo apt-get install -y ${pkgs.join(' ')}`);
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  execFileSync('apt-get', ['update', '-qq'], { env, stdio: 'inherit' });
  execFileSync('apt-get', ['install', '-y', '-qq', ...pkgs], { env, stdio: 'inherit' });
}

async function query(socket: string, sql: string): Promise<mysql.RowDataPacket[]> {
  const c = await mysql.createConnection({ socketPath: socket, user: OS_USER, password: '', connectTimeout: 2000 });
  try {
    const [rows] = await c.query<mysql.RowDataPacket[]>(sql);
    return rows;
  } finally {
    await c.end();
  }
}

export async function wsrepStatus(socket: string): Promise<{ size: number; state: string }> {
  const rows = await query(socket, "SHOW GLOBAL STATUS WHERE Variable_name IN ('wsrep_cluster_size', 'wsrep_local_state_comment')");
  const v = Object.fromEntries(rows.map((r) => [r.Variable_name, r.Value]));
  return { size: Number(v.wsrep_cluster_size ?? 0), state: String(v.wsrep_local_state_comment ?? '') };
}

export interface GaleraOptions {
  baseDir: string;
  nodes?: number;
  /** wsrep_max_ws_rows: a transaction writing more rows is refused (shows that big imports are chunked). */
  maxWriteSetRows?: number;
  log?: (line: string) => void;
}

/** Starts the cluster; resolves once every node is Synced in a cluster of all of them. */
export async function startGalera(o: GaleraOptions): Promise<{ nodes: GaleraNode[]; stop(): Promise<void> }> {
  ensureGaleraInstalled();
  const n = o.nodes ?? 3;
  const log = o.log ?? (() => {});
  const asRoot = process.getuid?.() === 0;
  const ports: { sql: number; group: number; ist: number; sst: number }[] = [];
  for (let i = 0; i < n; i++) ports.push({ sql: await freePort(), group: await freePort(), ist: await freePort(), sst: await freePort() });
  const clusterAddress = `gcomm://${ports.map((p) => `127.0.0.1:${p.group}`).join(',')}`;
  const nodes: GaleraNode[] = [];
  const children: (ChildProcess | undefined)[] = [];

  const start = (i: number, first: boolean) => {
    const dir = join(o.baseDir, `node${i + 1}`);
    const dataDir = join(dir, 'data');
    const tmpDir = join(dir, 'tmp');
    mkdirSync(tmpDir, { recursive: true });
    if (!existsSync(dataDir)) {
      mkdirSync(dataDir, { recursive: true });
      // A joiner's data arrives by rsync, whose daemon drops root for 'nobody': let it write there.
      if (asRoot && !first) chownSync(dataDir, 65534, 65534);
    }
    if (first && !existsSync(join(dataDir, 'mysql'))) {
      execFileSync('mariadb-install-db', ['--no-defaults', `--datadir=${dataDir}`, `--user=${OS_USER}`, '--skip-test-db', '--skip-name-resolve', `--tmpdir=${tmpDir}`], { stdio: 'ignore' });
    }
    const p = ports[i];
    const args = [
      '--no-defaults',
      `--datadir=${dataDir}`,
      `--socket=${join(dir, 'mariadb.sock')}`,
      `--pid-file=${join(dir, 'mariadb.pid')}`,
      `--port=${p.sql}`,
      '--bind-address=127.0.0.1',
      '--skip-name-resolve',
      `--log-error=${join(dir, 'mariadb.err')}`,
      `--tmpdir=${tmpDir}`,
      '--character-set-server=utf8mb4',
      '--collation-server=utf8mb4_unicode_ci',
      '--default-time-zone=+00:00',
      '--max-connections=500',
      '--innodb-buffer-pool-size=64M',
      '--innodb-flush-log-at-trx-commit=2',
      // Galera: row-based replication and interleaved auto-increment locks are required.
      '--wsrep-on=ON',
      `--wsrep-provider=${GALERA_PROVIDER}`,
      '--wsrep-cluster-name=keepwell-test',
      `--wsrep-cluster-address=${clusterAddress}`,
      `--wsrep-node-address=127.0.0.1:${p.group}`,
      `--wsrep-provider-options=base_port=${p.group};ist.recv_addr=127.0.0.1:${p.ist}`,
      `--wsrep-sst-receive-address=127.0.0.1:${p.sst}`,
      '--wsrep-sst-method=rsync',
      '--binlog-format=ROW',
      '--innodb-autoinc-lock-mode=2',
      // Reads wait for writes already committed elsewhere in the cluster (the README asks this of every node).
      '--wsrep-sync-wait=1',
      ...(o.maxWriteSetRows ? [`--wsrep-max-ws-rows=${o.maxWriteSetRows}`] : []),
      ...(first ? ['--wsrep-new-cluster'] : []),
      ...(asRoot ? ['--user=root'] : []),
    ];
    const child = spawn('mariadbd', args, { stdio: 'ignore' });
    children[i] = child;
    if (!nodes[i]) {
      nodes[i] = {
        index: i + 1,
        port: p.sql,
        socket: join(dir, 'mariadb.sock'),
        dataDir,
        logFile: join(dir, 'mariadb.err'),
        pid: () => children[i]?.pid,
        alive: () => children[i]?.exitCode === null && children[i]?.signalCode === null,
        kill: () => void children[i]?.kill('SIGKILL'),
        stop: async () => {
          const c = children[i];
          if (!c || c.exitCode !== null || c.signalCode !== null) return;
          c.kill('SIGTERM');
          for (let k = 0; k < 300 && c.exitCode === null && c.signalCode === null; k++) await sleep(100);
          if (c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
        },
      };
    }
  };

  const waitSynced = async (i: number, size: number) => {
    const deadline = Date.now() + 120_000;
    for (;;) {
      const c = children[i]!;
      if (c.exitCode !== null || c.signalCode !== null) {
        const tail = existsSync(nodes[i].logFile) ? readFileSync(nodes[i].logFile, 'utf8').split('\n').slice(-15).join('\n') : '';
        throw new Error(`Galera node ${i + 1} exited during start-up; ${nodes[i].logFile}:\n${tail}`);
      }
      try {
        const s = await wsrepStatus(nodes[i].socket);
        if (s.state === 'Synced' && s.size >= size) return;
      } catch {
        // not answering yet
      }
      if (Date.now() > deadline) throw new Error(`Galera node ${i + 1} was not Synced within 120 s; see ${nodes[i].logFile}`);
      await sleep(250);
    }
  };

  const stop = async () => {
    // Joiners first, then the first node, each by its own PID.
    for (const node of [...nodes].reverse()) await node?.stop();
  };
  try {
    start(0, true);
    await waitSynced(0, 1);
    log(`  node 1 bootstrapped the cluster (SQL port ${ports[0].sql})`);
    // One joiner at a time: the donor serves one state transfer at once.
    for (let i = 1; i < n; i++) {
      start(i, false);
      await waitSynced(i, i + 1);
      log(`  node ${i + 1} joined by rsync state transfer (SQL port ${ports[i].sql})`);
    }
  } catch (err) {
    await stop();
    throw err;
  }
  return { nodes, stop };
}
