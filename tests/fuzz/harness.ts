/**
 * Drives the fuzz against a running app on its own database: signs in the three roles of the first
 * demo lab, collects ids of both labs, matches routes to body templates with a harmless probe, then
 * sends generated requests one at a time and checks each answer:
 * - no 5xx;
 * - no stack trace or SQL text in the body;
 * - a refused request (4xx) wrote no row: the row count of every table is compared before and after.
 *   Allowed to change: `sessions` (the session store's own bookkeeping: it saves, touches and clears
 *   expired sessions whatever the answer), `password_guards` (a wrong password is refused and still
 *   counts towards the lockout; the fuzz sends none, see below), and `audit_log` rows with action
 *   'lockout' (written when an address is locked). Every other table must keep its count.
 * No wrong password is ever tried: bodies that a schema with a password field accepts are not sent,
 * and sign-in and sign-out are sent only signed out, so the fuzzing sessions stay signed in.
 */
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Express } from 'express';
import mysql from 'mysql2/promise';
import supertest from 'supertest';
import type { Db } from '../../server/db/client';
import type { ConnectionTarget } from '../../server/db/mariadb';
import { savePlan, startStudy } from '../../server/services/studies';
import { studyPlanInput } from '../../shared/schemas/studies';
import { makeCatalogue } from '../helpers/fixtures';
import {
  allowed,
  loadTemplates,
  makeRequest,
  routeKey,
  ROLES,
  tableFor,
  vocabularyOf,
  type FuzzRequest,
  type FuzzRole,
  type IdPools,
  type Template,
} from './generate';
import { listRoutes, type RouteInfo } from './routes';

/** Tables a refused request may change, and why (see the header). */
export const MAY_CHANGE_WHEN_REFUSED: Record<string, string> = {
  sessions: 'the session store saves, touches and clears sessions whatever the answer',
  password_guards: 'a wrong password is refused and still counts towards the lockout',
};
/** Audit actions a refused request may write. */
export const AUDIT_ACTIONS_WHEN_REFUSED = ['lockout'];

/** Stack frames, SQL text, driver error codes: none may reach a client. */
export const LEAK = /at .*\.ts:\d+|SELECT |INSERT |UPDATE .* SET |ER_[A-Z_]+|errno|sqlMessage|node_modules/;

export interface FuzzApp {
  app: Express;
  admin: ConnectionTarget;
  /** Lab 1 fuzzes; lab 2 provides "another lab's" ids. */
  labs: { id: number; members: Record<string, number> }[];
  emails: { owner: string; formulator: string; technician: string };
  password: string;
}

export interface Failure {
  request: FuzzRequest;
  status: number;
  problem: string;
  response: string;
}

export interface FuzzReport {
  seed: number;
  sent: number;
  byStatus: Map<number, number>;
  failures: Failure[];
  routes: RouteInfo[];
  templatesMatched: number;
  seconds: number;
  /** Of `seconds`: waiting for answers, and counting rows. */
  answerSeconds: number;
  countSeconds: number;
}

type Agent = ReturnType<typeof supertest.agent>;

export class Fuzzer {
  private server!: Server;
  private conn!: mysql.Connection;
  private agents = new Map<FuzzRole, Agent>();
  routes: RouteInfo[] = [];
  templates: Template[] = [];
  routeTemplates = new Map<string, Template[]>();
  ids!: IdPools;
  private tables: string[] = [];
  private lastLogAtStart = 0;

  constructor(private readonly target: FuzzApp) {}

  async start(): Promise<void> {
    this.server = createServer(this.target.app);
    await new Promise<void>((resolve) => this.server.listen(0, '127.0.0.1', resolve));
    this.conn = await mysql.createConnection({ ...this.target.admin, multipleStatements: false });
    this.routes = listRoutes(this.target.app);
    this.templates = await loadTemplates();
    for (const role of ['owner', 'formulator', 'technician'] as const) {
      const agent = supertest.agent(this.server);
      const res = await agent.post('/api/auth/sign-in').set('X-Keepwell-Request', '1').send({ email: this.target.emails[role], password: this.target.password });
      if (res.status !== 200) throw new Error(`fuzz: sign-in as ${role} failed: ${res.status} ${res.text}`);
      this.agents.set(role, agent);
    }
    this.ids = await this.collectIds();
    const [rows] = await this.conn.query<mysql.RowDataPacket[]>('SELECT table_name AS t FROM information_schema.tables WHERE table_schema = DATABASE() AND table_type = ? ORDER BY 1', ['BASE TABLE']);
    this.tables = rows.map((r) => String(r.t)).filter((t) => !t.startsWith('__'));
    const [[logs]] = await this.conn.query<mysql.RowDataPacket[]>('SELECT COALESCE(MAX(id), 0) AS id FROM chamber_logs');
    this.lastLogAtStart = Number(logs.id);
    await this.probe();
  }

  async stop(): Promise<void> {
    await this.conn?.end();
    await new Promise<void>((resolve) => (this.server ? this.server.close(() => resolve()) : resolve()));
  }

  /** Ids of every table with a lab_id, per lab; sample codes by label code. */
  private async collectIds(): Promise<IdPools> {
    const [own, other] = this.target.labs;
    const [cols] = await this.conn.query<mysql.RowDataPacket[]>(
      "SELECT c.table_name AS t FROM information_schema.columns c JOIN information_schema.columns i ON i.table_schema = c.table_schema AND i.table_name = c.table_name AND i.column_name = 'id' WHERE c.table_schema = DATABASE() AND c.column_name = 'lab_id' ORDER BY 1",
    );
    const pools: IdPools = { own: new Map(), other: new Map(), fuzzingMembers: Object.values(own.members) };
    for (const { t } of cols) {
      for (const [lab, map] of [[own.id, pools.own], [other.id, pools.other]] as const) {
        const [ids] = await this.conn.query<mysql.RowDataPacket[]>(`SELECT id FROM \`${t}\` WHERE lab_id = ? ORDER BY id LIMIT 12`, [lab]);
        if (ids.length) map.set(String(t), ids.map((r) => Number(r.id)));
      }
    }
    for (const [lab, map] of [[own.id, pools.own], [other.id, pools.other]] as const) {
      const [codes] = await this.conn.query<mysql.RowDataPacket[]>('SELECT code FROM samples WHERE lab_id = ? ORDER BY id LIMIT 12', [lab]);
      if (codes.length) map.set('samples.code', codes.map((r) => String(r.code)));
    }
    pools.other.set('users', Object.values(other.members));
    return pools;
  }

  private firstId(route: RouteInfo, param: string): string {
    const table = param === 'code' ? 'samples.code' : tableFor(route.path, param);
    const own = (table && this.ids.own.get(table)) || [];
    const usable = table === 'users' ? own.filter((id) => !this.ids.fuzzingMembers.includes(Number(id))) : own;
    return encodeURIComponent(String(usable[0] ?? (table && this.ids.other.get(table)?.[0]) ?? 1));
  }

  /**
   * Which templates a route's body schema looks like. A probe body carries the unknown field
   * "__probe__", so a strict schema refuses it and nothing is written: first `{__probe__}` (the
   * answer names the required fields, or a union's discriminator), then each template that has those
   * fields, with "__probe__" added; the templates whose answer names the fewest other fields are the route's.
   */
  private async probe(): Promise<void> {
    const fieldsOf = async (route: RouteInfo, body: unknown): Promise<string[] | null> => {
      const role: FuzzRole = allowed(route, 'owner') ? 'owner' : 'signed-out';
      const path = route.path.replace(/:([A-Za-z_]+)/g, (_m, p: string) => this.firstId(route, p));
      const res = await this.send({ n: -1, role, route, method: route.method, url: path, headers: { 'X-Keepwell-Request': '1' }, body: { kind: 'json', value: body }, what: ['probe'] });
      const fields = res.body?.error?.fields as Record<string, string> | undefined;
      // A strict object names "__probe__"; a union without its discriminator names only that.
      if (res.status !== 400 || !fields) return null;
      return Object.keys(fields).map((k) => k.split('.')[0]).filter((k) => k !== '__probe__');
    };
    for (const route of this.routes) {
      if (route.method === 'GET') continue;
      const first = await fieldsOf(route, { __probe__: 1 });
      if (!first || !first.length) continue;
      const named = new Set(first);
      const candidates = this.templates.filter((t) => [...named].every((k) => t.keys.has(k))).slice(0, 30);
      let best: Template[] = [];
      let fewest = Infinity;
      for (const t of candidates) {
        const left = await fieldsOf(route, { ...t.value, __probe__: 1 });
        if (!left) continue;
        if (left.length < fewest) {
          fewest = left.length;
          best = [t];
        } else if (left.length === fewest) best.push(t);
      }
      if (best.length && fewest <= 2) this.routeTemplates.set(routeKey(route), best);
    }
  }

  private async counts(): Promise<Map<string, number>> {
    const parts = this.tables.map((t) =>
      t === 'audit_log'
        ? `SELECT 'audit_log' AS t, COUNT(*) AS n FROM audit_log WHERE action NOT IN (${AUDIT_ACTIONS_WHEN_REFUSED.map((a) => `'${a}'`).join(',')})`
        : t === 'chamber_readings'
          ? // The demo's logs hold most rows (slow to count each time): count the readings of logs added since the start.
            `SELECT 'chamber_readings' AS t, COUNT(*) AS n FROM chamber_readings WHERE log_id > ${this.lastLogAtStart}`
          : `SELECT '${t}' AS t, COUNT(*) AS n FROM \`${t}\``,
    );
    const [rows] = await this.conn.query<mysql.RowDataPacket[]>(parts.join(' UNION ALL '));
    return new Map(rows.map((r) => [String(r.t), Number(r.n)]));
  }

  /** Sends one request as its role: signed out is a fresh client without a cookie. */
  async send(req: FuzzRequest): Promise<{ status: number; text: string; type: string; body: { error?: { fields?: Record<string, string> } } | undefined }> {
    const agent = req.role === 'signed-out' ? supertest(this.server) : this.agents.get(req.role)!;
    let r = (agent as unknown as Record<string, (url: string) => supertest.Test>)[req.method.toLowerCase()](req.url);
    r = r.timeout(30_000);
    for (const [k, v] of Object.entries(req.headers)) r = r.set(k, v);
    const b = req.body;
    if (b?.kind === 'json') r = r.set('Content-Type', 'application/json').send(JSON.stringify(b.value) ?? 'null');
    else if (b?.kind === 'raw') r = r.set('Content-Type', b.contentType).send(b.text);
    else if (b?.kind === 'multipart') {
      for (const [k, v] of b.fields) r = r.field(k, v);
      for (const f of b.files) r = r.attach(f.field, f.content, { filename: f.name, contentType: f.type });
      if (!b.fields.length && !b.files.length) r = r.field('x', '');
    }
    try {
      const res = await r;
      const type = String(res.headers['content-type'] ?? '');
      const text = /json|text|csv|html/.test(type) || !type ? (res.text ?? '') : '';
      return { status: res.status, text, type, body: res.body };
    } catch (err) {
      const e = err as { response?: { status: number; text: string; headers: Record<string, string>; body: unknown }; message?: string };
      if (e.response) return { status: e.response.status, text: e.response.text ?? '', type: String(e.response.headers['content-type'] ?? ''), body: e.response.body as never };
      return { status: 599, text: `no answer: ${e.message}`, type: '', body: undefined };
    }
  }

  /** Every (route, role) pair the fuzz sends, in a fixed order. */
  combos(): { route: RouteInfo; role: FuzzRole }[] {
    return this.routes.flatMap((route) => ROLES.filter((role) => allowed(route, role)).map((role) => ({ route, role })));
  }

  async run(count: number, seed: number, opts: { onProgress?: (sent: number) => void; maxFailures?: number } = {}): Promise<FuzzReport> {
    const t0 = performance.now();
    const combos = this.combos();
    const vocabulary = vocabularyOf(this.templates);
    const input = { routes: this.routes, templates: this.templates, routeTemplates: this.routeTemplates, ids: this.ids, seed };
    const passwordSchemas = this.templates.filter((t) => t.hasPassword).map((t) => t.schema);
    const byStatus = new Map<number, number>();
    const failures: Failure[] = [];
    let before = await this.counts();
    let sent = 0;
    let answerMs = 0;
    let countMs = 0;
    for (let n = 0; sent < count; n++) {
      const req = makeRequest(input, n, combos, vocabulary);
      // No wrong-password attempts: a body a password schema accepts is not sent.
      const body = req.body;
      if (body?.kind === 'json' && passwordSchemas.some((s) => s.safeParse(body.value).success)) continue;
      const ta = performance.now();
      const res = await this.send(req);
      answerMs += performance.now() - ta;
      sent++;
      byStatus.set(res.status, (byStatus.get(res.status) ?? 0) + 1);
      const fail = (problem: string) => failures.push({ request: req, status: res.status, problem, response: res.text.slice(0, 800) });
      if (res.status >= 500) fail(`answered ${res.status}`);
      const leak = LEAK.exec(res.text);
      if (leak) fail(`the body shows internals: "${leak[0]}"`);
      const tc = performance.now();
      const after = await this.counts();
      countMs += performance.now() - tc;
      if (res.status >= 400 && res.status < 500) {
        const changed = [...after].filter(([t, n]) => before.get(t) !== n && !(t in MAY_CHANGE_WHEN_REFUSED)).map(([t, n]) => `${t} ${before.get(t)} -> ${n}`);
        if (changed.length) fail(`refused with ${res.status} but wrote rows: ${changed.join(', ')}`);
      }
      before = after;
      if (opts.onProgress && sent % 1000 === 0) opts.onProgress(sent);
      if (opts.maxFailures && failures.length >= opts.maxFailures) break;
    }
    return { seed, sent, byStatus, failures, routes: this.routes, templatesMatched: this.routeTemplates.size, seconds: (performance.now() - t0) / 1000, answerSeconds: answerMs / 1000, countSeconds: countMs / 1000 };
  }
}

/**
 * Gives the second lab (which the demo seeds with people, conditions and a chamber log only) a
 * product, variants, batches and a running study, so "another lab's id" exists for those too.
 */
export async function seedOtherLab(db: Db, lab: { id: number; members: Record<string, number> }, timeZone: string): Promise<void> {
  const cat = await makeCatalogue(db, lab.id, 'Other lab lotion');
  const actor = { id: Object.values(lab.members)[0], labId: lab.id, timeZone };
  const plan = studyPlanInput.parse({
    productId: cat.productId,
    title: 'Other lab study',
    startDate: '2026-01-05',
    batchIds: cat.batchIds,
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', offsets: [{ unit: 'week', n: 4 }] },
      { conditionId: cat.conditions.oven45, role: 'accelerated', offsets: [{ unit: 'week', n: 4 }] },
    ],
    attributes: Object.values(cat.attributeIds)
      .slice(0, 2)
      .map((attributeId) => ({ attributeId, criterion: { kind: 'none' } })),
  });
  const id = await savePlan(db, actor, plan);
  await startStudy(db, actor, id);
}

/** One failure as a reproducible report: the request (seed and number), then the answer. */
export function describeFailure(f: Failure, seed: number): string {
  const r = f.request;
  const body =
    r.body?.kind === 'json'
      ? JSON.stringify(r.body.value)
      : r.body?.kind === 'raw'
        ? `(${r.body.contentType}) ${String(r.body.text)}`
        : r.body?.kind === 'multipart'
          ? `multipart fields ${JSON.stringify(r.body.fields)} files ${JSON.stringify(r.body.files.map((x) => ({ field: x.field, name: x.name, type: x.type, bytes: x.content.length, text: x.content.toString('utf8').slice(0, 300) })))}`
          : '(none)';
  return [
    `${f.problem}: request #${r.n} of seed ${seed} (FUZZ_SEED=${seed})`,
    `  ${r.role}: ${r.method} ${r.url.slice(0, 300)}`,
    `  route ${r.route.method} ${r.route.path}; ${r.what.join('; ')}`,
    `  headers ${JSON.stringify(r.headers)}`,
    `  body ${body.slice(0, 600)}`,
    `  -> ${f.status} ${f.response.slice(0, 600)}`,
  ].join('\n');
}
