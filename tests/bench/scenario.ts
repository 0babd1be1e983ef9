/**
 * The shape of one benchmark scenario, and what run.ts hands to it.
 *
 * A scenario is { name, setup?(ctx), request(ctx), raw?(ctx) }:
 *  - setup prepares data (through ctx.pool, the app's account) and keeps what
 *    it needs in its own closure (ids, a session cookie ...);
 *  - request returns the HTTP load (autocannon options) run against the real
 *    app in its own process;
 *  - raw returns zero or more "raw" loads: the same SQL the route runs, sent
 *    straight through mysql2 with the same concurrency, so the report can say
 *    how much of the route's cost is the database and how much is the app.
 *
 * Extra bench modules (see EXTRA_MODULES in run.ts) export `scenarios`
 * (or a default export): a Scenario, an array of them, or a function of ctx
 * returning either.
 */
import type { RequestSpec } from 'autocannon';
import type { Db, Pool } from '../../server/db/client';
import type { ConnectionTarget } from '../../server/db/mariadb';
import type { BenchDataset } from './dataset';

export interface BenchContext {
  /** http://127.0.0.1:PORT of the app under test (no trailing slash). */
  baseUrl: string;
  /** Seconds each measured run lasts (BENCH_SECONDS, default 10). */
  seconds: number;
  /** The app's own account on the bench MariaDB (least privilege, like production). */
  app: ConnectionTarget;
  /** Privileged account (socket): only for setup that the app account may not do. */
  admin: ConnectionTarget;
  /** The raw pool (app account, RAW_POOL_SIZE connections), also used for seeding. */
  pool: Pool;
  db: Db;
  data: BenchDataset;
  /** Adds a goal measured in setup to the goals listed under the table. */
  goalResult(r: GoalResult): void;
  /** Signs in through the API and returns the Cookie header value. */
  signIn(email: string, password?: string): Promise<string>;
  log(line: string): void;
}

export interface HttpLoad {
  /** Concurrent HTTP connections (default 50). */
  connections?: number;
  method?: string;
  path?: string;
  headers?: Record<string, string>;
  body?: string;
  /** A request sequence each connection loops over (overrides method/path/body). */
  requests?: RequestSpec[];
  /** A line printed under the scenario's results. */
  note?: string;
  /** Seconds per measured run for this scenario (HTTP and raw), when one request takes seconds. */
  seconds?: number;
  /** More connection counts to run the same load (and its raw loads) at, after `connections`. */
  alsoAt?: number[];
  /** What this route should reach; checked after each run and listed under the table (see Goal). */
  goal?: Goal;
}

/**
 * A route's goal, checked per connection count. `ratio` compares app req/s with the raw load whose name
 * contains `against` (default: the scenario's last raw load); p50Max/p99Max in ms; `latencyAt` limits a
 * latency goal to some connection counts.
 */
export interface Goal {
  ratio?: number;
  against?: string;
  p50Max?: number;
  p99Max?: number;
  latencyAt?: number[];
}

/** A goal measured once in a scenario's setup (an upload timed once, say), listed with the others. */
export interface GoalResult {
  scenario: string;
  what: string;
  measured: string;
  goal: string;
  met: boolean;
}

export interface RawLoad {
  /** What is measured, e.g. "main query alone". */
  name: string;
  /** Concurrent async loops (default: the HTTP load's connections). */
  concurrency?: number;
  /** One operation: a query, or every query one request makes, in order. `loop` is 0..concurrency-1. */
  once(loop: number): Promise<unknown>;
  note?: string;
}

export interface Scenario {
  name: string;
  /** One line saying what the scenario stands for. */
  about?: string;
  setup?(ctx: BenchContext): Promise<void>;
  request(ctx: BenchContext): HttpLoad;
  raw?(ctx: BenchContext): RawLoad[];
}

export type ScenarioExport = Scenario | Scenario[] | ((ctx: BenchContext) => Scenario | Scenario[] | Promise<Scenario | Scenario[]>);

/** The session id express-session stores, from a `kw.sid=s%3A<id>.<sig>` cookie. */
export function sessionIdFromCookie(cookie: string): string {
  const value = decodeURIComponent(cookie.split(';')[0].split('=').slice(1).join('='));
  const m = /^s:([^.]+)\./.exec(value);
  if (!m) throw new Error(`Not a signed session cookie: ${cookie}`);
  return m[1];
}
