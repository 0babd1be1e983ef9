/**
 * Measuring: HTTP load with autocannon (latencies kept at full precision from
 * its 'response' event, since its own histogram rounds to whole ms), raw loads
 * as N concurrent async loops, and CPU use of each process from /proc.
 */
import { readFileSync } from 'node:fs';
import { performance } from 'node:perf_hooks';
import autocannon, { type Instance, type Options } from 'autocannon';
import type { HttpLoad, RawLoad } from './scenario';

export interface Measured {
  /** Completed per second over the run (responses for HTTP, operations for raw), count ÷ wall time. */
  rate: number;
  p50: number;
  p99: number;
  count: number;
  /** HTTP: responses outside 2xx. */
  non2xx: number;
  /** HTTP: connection errors and timeouts; raw: rejected operations. */
  errors: number;
  statusCodes?: Record<string, number>;
  firstError?: string;
  cpu?: CpuShare;
}

/**
 * Share of one core used during a run, in percent: the app server, mariadbd,
 * this process (load generator and raw loops), and everything else on the
 * machine (other work running at the same time skews the figures).
 */
export interface CpuShare {
  loadgen: number;
  server?: number;
  mariadb?: number;
  others?: number;
}

export const DEFAULT_CONNECTIONS = 50;

/** Set when the run is interrupted (Ctrl-C): loops stop, autocannon is stopped. */
export const abort = { requested: false, current: null as Instance | null };

export function percentile(sorted: Float64Array, p: number): number {
  if (sorted.length === 0) return NaN;
  const rank = Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1));
  return sorted[rank];
}

function summarize(latencies: number[]) {
  const sorted = Float64Array.from(latencies).sort();
  return { p50: percentile(sorted, 50), p99: percentile(sorted, 99) };
}

export async function runHttp(baseUrl: string, load: HttpLoad, seconds: number, watch: CpuWatch): Promise<Measured> {
  const latencies: number[] = [];
  const opts: Options = {
    url: baseUrl + (load.requests ? '' : (load.path ?? '/')),
    connections: load.connections ?? DEFAULT_CONNECTIONS,
    duration: seconds,
    pipelining: 1,
    timeout: 30,
    method: load.method ?? 'GET',
    headers: load.headers,
    body: load.body,
    requests: load.requests,
  };
  const cpu = watch.start();
  const t0 = performance.now();
  const instance = autocannon(opts);
  abort.current = instance;
  instance.on('response', (_client: unknown, _status: number, _bytes: number, ms: number) => {
    latencies.push(ms);
  });
  const r = await instance;
  const elapsed = (performance.now() - t0) / 1000;
  abort.current = null;
  const statusCodes: Record<string, number> = {};
  for (const [code, s] of Object.entries(r.statusCodeStats ?? {})) statusCodes[code] = Number(s.count);
  return {
    // Responses / wall seconds: autocannon's requests.average (mean of 1 s samples) reads low when a
    // response takes longer than a second (the first sample is empty), as bcrypt sign-ins can.
    rate: latencies.length / elapsed,
    ...summarize(latencies),
    count: latencies.length,
    non2xx: r.non2xx,
    errors: r.errors,
    statusCodes,
    cpu: cpu.stop(),
  };
}

export async function runRaw(load: RawLoad, concurrency: number, seconds: number, watch: CpuWatch): Promise<Measured> {
  const latencies: number[] = [];
  let errors = 0;
  let firstError: string | undefined;
  const cpu = watch.start();
  const t0 = performance.now();
  const end = t0 + seconds * 1000;
  await Promise.all(
    Array.from({ length: concurrency }, async (_, loop) => {
      while (!abort.requested && performance.now() < end) {
        const t = performance.now();
        try {
          await load.once(loop);
          latencies.push(performance.now() - t);
        } catch (err) {
          errors++;
          firstError ??= err instanceof Error ? err.message : String(err);
        }
      }
    }),
  );
  const elapsed = (performance.now() - t0) / 1000;
  return { rate: latencies.length / elapsed, ...summarize(latencies), count: latencies.length, non2xx: 0, errors, firstError, cpu: cpu.stop() };
}

/** CPU ticks (user + system, all threads) of a process, from /proc/PID/stat; null where /proc is missing. */
function procTicks(pid: number | 'self'): number | null {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return Number(fields[11]) + Number(fields[12]);
  } catch {
    return null;
  }
}

/** Busy ticks of the whole machine (all cores), from /proc/stat. */
function machineBusyTicks(): number | null {
  try {
    const [, user, nice, system, , , irq, softirq, steal] = readFileSync('/proc/stat', 'utf8').split('\n')[0].trim().split(/\s+/).map(Number);
    return user + nice + system + irq + softirq + steal;
  } catch {
    return null;
  }
}

const CLOCK_TICKS = 100; // USER_HZ on Linux (`getconf CLK_TCK`)

/** Summed ticks of several processes (the app's primary and its workers), or null when none can be read. */
function ticksOf(pids: number[]): number | null {
  let sum: number | null = null;
  for (const pid of pids) {
    const t = procTicks(pid);
    if (t != null) sum = (sum ?? 0) + t;
  }
  return sum;
}

export class CpuWatch {
  /** server: the app's processes (primary and workers); their CPU is added up (100 % = one core). */
  constructor(private pids: { server?: number[]; mariadb?: number }) {}

  start() {
    const t0 = performance.now();
    const read = () => ({
      own: procTicks('self'),
      server: this.pids.server?.length ? ticksOf(this.pids.server) : null,
      db: this.pids.mariadb ? procTicks(this.pids.mariadb) : null,
      all: machineBusyTicks(),
    });
    const before = read();
    const own0 = process.cpuUsage();
    return {
      stop: (): CpuShare => {
        const after = read();
        const wallMs = performance.now() - t0;
        const pct = (ticks: number) => ((ticks / CLOCK_TICKS) * 1000 * 100) / wallMs;
        const delta = (k: keyof typeof before) => (before[k] == null || after[k] == null ? undefined : after[k]! - before[k]!);
        const own = process.cpuUsage(own0);
        const [server, db, all, ownTicks] = [delta('server'), delta('db'), delta('all'), delta('own')];
        return {
          loadgen: ((own.user + own.system) / 1000 / wallMs) * 100,
          server: server == null ? undefined : pct(server),
          mariadb: db == null ? undefined : pct(db),
          others: all == null || ownTicks == null ? undefined : Math.max(0, pct(all - ownTicks - (server ?? 0) - (db ?? 0))),
        };
      },
    };
  }
}

/**
 * Waits until the app has finished the requests autocannon left in flight when a run ended
 * (the server goes on with them after the client has gone): no query of the app account running
 * and the server process nearly idle, twice in a row 250 ms apart. Returns the seconds waited.
 */
export async function waitForQuiet(o: { serverPids?: number[]; activeQueries: () => Promise<number>; maxSeconds?: number }): Promise<number> {
  const t0 = performance.now();
  const deadline = t0 + (o.maxSeconds ?? 120) * 1000;
  let calm = 0;
  let ticks = o.serverPids?.length ? ticksOf(o.serverPids) : null;
  while (calm < 2 && performance.now() < deadline && !abort.requested) {
    await new Promise((r) => setTimeout(r, 250));
    const now = o.serverPids?.length ? ticksOf(o.serverPids) : null;
    // 250 ms at 100 ticks/s is 25 ticks for a whole core; 3 ticks is about 12 %.
    const serverIdle = ticks == null || now == null || now - ticks <= 2 + (o.serverPids?.length ?? 1);
    ticks = now;
    calm = serverIdle && (await o.activeQueries()) === 0 ? calm + 1 : 0;
  }
  return (performance.now() - t0) / 1000;
}
