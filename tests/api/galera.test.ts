/**
 * What a Galera cluster refuses or handles differently, checked on the real schema and code:
 * every table has a primary key and is InnoDB (Galera replicates only InnoDB, and rows of a table
 * without a primary key are applied by full scans or refused); no LOCK TABLES or GET_LOCK; and ids of
 * multi-row INSERTs are right when auto_increment_increment is not 1 (a cluster of N nodes sets N).
 * `npm run test:cluster` runs the app on a real three-node cluster.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { and, eq, inArray } from 'drizzle-orm';
import mysql from 'mysql2/promise';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { createApp } from '../../server/app';
import { loadConfig } from '../../server/config';
import { createDb, createPool } from '../../server/db/client';
import { auditLog, checkpoints, observations } from '../../server/db/schema';
import { createLogger } from '../../server/log';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { Client, createTestApp, DEMO, DEMO_PASSWORD, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => t?.close());

describe('schema and queries on a Galera cluster', () => {
  it('gives every table a primary key and InnoDB', async () => {
    const conn = await mysql.createConnection({ ...t.admin });
    try {
      const [tables] = await conn.query<mysql.RowDataPacket[]>(
        `SELECT t.table_name AS name, t.engine,
                (SELECT COUNT(*) FROM information_schema.table_constraints c
                  WHERE c.table_schema = t.table_schema AND c.table_name = t.table_name AND c.constraint_type = 'PRIMARY KEY') AS pk
           FROM information_schema.tables t WHERE t.table_schema = ? AND t.table_type = 'BASE TABLE'`,
        [t.database],
      );
      expect(tables.length).toBeGreaterThan(20);
      expect(tables.filter((r) => Number(r.pk) !== 1).map((r) => r.name)).toEqual([]);
      expect(tables.filter((r) => r.engine !== 'InnoDB').map((r) => r.name)).toEqual([]);
      // A composite key counts: study_batches is keyed by (study_id, batch_id).
      const [sb] = await conn.query<mysql.RowDataPacket[]>(
        `SELECT GROUP_CONCAT(column_name ORDER BY ordinal_position) AS cols FROM information_schema.key_column_usage
          WHERE table_schema = ? AND table_name = 'study_batches' AND constraint_name = 'PRIMARY'`,
        [t.database],
      );
      expect(sb[0].cols).toBe('study_id,batch_id');
    } finally {
      await conn.end();
    }
  });

  it('uses no LOCK TABLES and no named locks (GET_LOCK), which a cluster does not share between nodes', () => {
    const found: string[] = [];
    const walk = (dir: string) => {
      for (const name of readdirSync(dir)) {
        const p = join(dir, name);
        if (statSync(p).isDirectory()) walk(p);
        else if (/\.(ts|sql)$/.test(name)) {
          readFileSync(p, 'utf8')
            .split('\n')
            .forEach((line, i) => {
              if (/^\s*(\*|\/\/|\/\*)/.test(line)) return; // comments may name them
              if (/\bLOCK\s+TABLES?\b|\bGET_LOCK\s*\(|\bRELEASE_LOCK\s*\(/i.test(line)) found.push(`${p}:${i + 1}`);
            });
        }
      }
    };
    walk('server');
    walk('jobs');
    expect(found).toEqual([]);
  });

  it('names the right observation in each audit row when ids are spaced by auto_increment_increment = 3', async () => {
    // The app on the same database through connections set as on a node of a three-node cluster.
    const m = inject('mariadb');
    const pool = createPool({ host: '127.0.0.1', port: m.port, user: m.appUser, password: m.appPassword, database: t.database }, 4);
    pool.on('connection', (c) => void c.query('SET SESSION auto_increment_increment = 3, auto_increment_offset = 2'));
    const db = createDb(pool);
    const { app, close } = createApp({ db, pool, config: loadConfig({ NODE_ENV: 'test' }), log: createLogger(true), sessionSecret: 'test-secret-that-is-long-enough', serveClient: false, files: t.files });
    try {
      const sign = async (email: string) => {
        const c = new Client(app);
        expect((await c.post('/api/auth/sign-in', { email, password: DEMO_PASSWORD })).status).toBe(200);
        return c;
      };
      const [formulator, technician] = [await sign(DEMO.formulator), await sign(DEMO.technician)];
      const cat = await makeCatalogue(t.db, t.labs[0].id);
      const draft = await formulator.post('/api/studies', planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -7)));
      const study = (await formulator.post(`/api/studies/${draft.body.study.id}/start`)).body.study;
      const initial = study.checkpoints.find((c: { kind: string }) => c.kind === 'initial');
      const sample = study.samples.find((s: { studyConditionId: number | null }) => s.studyConditionId == null);
      const attr = (code: string) => study.attributes.find((a: { code: string }) => a.code === code).id;
      const res = await technician.put(`/api/samples/${sample.code}/checkpoints/${initial.id}/observations`, {
        entries: [
          { studyAttributeId: attr('ph'), value: 5.5 },
          { studyAttributeId: attr('separation'), value: 0 },
          { studyAttributeId: attr('odor'), value: 'no_change' },
        ],
      });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
      const rows = await t.db.select().from(observations).where(and(eq(observations.sampleId, sample.id), eq(observations.checkpointId, initial.id)));
      expect(rows).toHaveLength(3);
      const ids = rows.map((r) => r.id).sort((a, b) => a - b);
      expect(ids[1] - ids[0]).toBe(3); // spaced as on the cluster
      const audits = await t.db
        .select()
        .from(auditLog)
        .where(and(eq(auditLog.entity, 'observation'), inArray(auditLog.entityId, ids.map(String))));
      expect(audits).toHaveLength(3);
      for (const a of audits) {
        const o = rows.find((r) => String(r.id) === a.entityId)!;
        const code = study.attributes.find((x: { id: number }) => x.id === o.studyAttributeId).code;
        expect((a.newValue as { attribute: string }).attribute).toBe(code);
      }

      // Each save writes its checkpoint's row (settles + 1), even when the checkpoint stays open: on a
      // cluster, two saves at one checkpoint on two nodes then conflict, and the one retried counts
      // the other's readings before it decides whether the checkpoint is done.
      const settles = async () => (await t.db.select({ n: checkpoints.settles }).from(checkpoints).where(eq(checkpoints.id, initial.id)))[0].n;
      const before = await settles();
      const other = study.samples.find((s: { id: number; studyConditionId: number | null }) => s.studyConditionId == null && s.id !== sample.id);
      expect(other, 'a second retained sample at the initial test').toBeTruthy();
      const again = await technician.put(`/api/samples/${other.code}/checkpoints/${initial.id}/observations`, { entries: [{ studyAttributeId: attr('ph'), value: 5.6 }] });
      expect(again.status, JSON.stringify(again.body)).toBe(200);
      expect(await settles()).toBe(before + 1);
      expect(before).toBeGreaterThanOrEqual(1);
    } finally {
      await close();
      await pool.end();
    }
  });
});
