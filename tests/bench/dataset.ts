/**
 * A realistic, repeatable dataset for the benchmark, on top of the demo labs:
 * 50 invented labs of 12 members each (1 owner, 3 formulators, 8 technicians)
 * and about 100,000 audit rows spread over every lab and the last two years,
 * so reads hit tables of a non-trivial size. Written through the app's own
 * account with multi-row inserts. Every name is invented.
 */
import bcrypt from 'bcryptjs';
import type { Pool } from '../../server/db/client';
import { DEMO_LABS, DEMO_PASSWORD } from '../../server/demo/people';
import type { SeededLab } from '../../server/demo/seed';
import { mulberry32 } from '../../server/demo/storage';
import type { Role } from '../../shared/roles';

export interface BenchMember {
  id: number;
  email: string;
  role: Role;
}

export interface BenchLab {
  id: number;
  name: string;
  owner: string;
  members: BenchMember[];
}

export interface BenchDataset {
  /** Password of every demo and generated account. */
  password: string;
  demo: SeededLab[];
  labs: BenchLab[];
  /** Every account that can sign in (demo ones first). */
  accounts: string[];
  auditRows: number;
}

export interface DatasetOptions {
  labs?: number;
  membersPerLab?: number;
  auditRows?: number;
}

const FIRST = ['Ada', 'Bo', 'Cleo', 'Dario', 'Elin', 'Farid', 'Greta', 'Hugo', 'Ines', 'Jonas', 'Kaia', 'Lior', 'Mira', 'Nils', 'Oona', 'Pavel', 'Quinn', 'Rhea', 'Soren', 'Tove'];
const LAST = ['Abbot', 'Brandt', 'Castell', 'Dunmore', 'Eskola', 'Ferrand', 'Galloway', 'Haldane', 'Ivers', 'Jessop', 'Kettering', 'Lorimer', 'Marsh', 'Norland', 'Orme', 'Pellow'];
const LAB_WORDS = ['Thistle', 'Marigold', 'Saltmarsh', 'Bramble', 'Linden', 'Quarry', 'Harbor', 'Meadow', 'Ember', 'Juniper'];
const ACTIONS = ['create', 'update', 'update', 'update', 'sign_in', 'void', 'sign', 'amend'] as const;
const ENTITIES = ['observation', 'observation', 'observation', 'study', 'batch', 'formula', 'sample', 'user', 'storage_condition'];

function roleFor(index: number): Role {
  return index === 0 ? 'owner' : index <= 3 ? 'formulator' : 'technician';
}

export async function generateDataset(pool: Pool, demo: SeededLab[], opts: DatasetOptions = {}): Promise<BenchDataset> {
  const labCount = opts.labs ?? 50;
  const perLab = opts.membersPerLab ?? 12;
  const auditTotal = opts.auditRows ?? 100_000;
  const rand = mulberry32(20261201);
  const pick = <T>(xs: readonly T[]) => xs[Math.floor(rand() * xs.length)];
  // One bcrypt hash (cost 10, like real accounts) reused for every generated member: hashing 600 would take a minute.
  const hash = bcrypt.hashSync(DEMO_PASSWORD, 10);

  const labs: BenchLab[] = [];
  for (let l = 0; l < labCount; l++) {
    const n = String(l + 1).padStart(2, '0');
    const name = `${LAB_WORDS[l % LAB_WORDS.length]} Bench Lab ${n}`;
    const [res] = await pool.query<import('mysql2').ResultSetHeader>(
      'INSERT INTO labs (name, time_zone) VALUES (?, ?)',
      [name, pick(['Europe/Berlin', 'Europe/Lisbon', 'America/Chicago', 'Asia/Singapore', 'UTC'])],
    );
    const labId = res.insertId;
    const rows = Array.from({ length: perLab }, (_, m) => [
      labId,
      `b${n}-m${String(m + 1).padStart(2, '0')}@bench.example`,
      `${pick(FIRST)} ${pick(LAST)}`,
      hash,
      roleFor(m),
    ]);
    await pool.query('INSERT INTO users (lab_id, email, name, password_hash, role) VALUES ?', [rows]);
    const [ids] = await pool.query<import('mysql2').RowDataPacket[]>('SELECT id, email, role FROM users WHERE lab_id = ? ORDER BY id', [labId]);
    const members = ids.map((r) => ({ id: Number(r.id), email: String(r.email), role: r.role as Role }));
    labs.push({ id: labId, name, owner: members[0].email, members });
  }

  // Audit rows for the demo labs and the generated ones, 1,000 per statement, 4 statements at a time.
  const labUsers: { labId: number; userIds: number[] }[] = [
    ...demo.map((d) => ({ labId: d.id, userIds: Object.values(d.members) })),
    ...labs.map((l) => ({ labId: l.id, userIds: l.members.map((m) => m.id) })),
  ];
  const now = Date.now();
  const twoYears = 730 * 86_400_000;
  const batch = 1000;
  const statements: unknown[][][] = [];
  for (let done = 0; done < auditTotal; done += batch) {
    const rows: unknown[][] = [];
    for (let i = 0; i < Math.min(batch, auditTotal - done); i++) {
      const lab = pick(labUsers);
      const action = pick(ACTIONS);
      const entity = pick(ENTITIES);
      const entityId = String(1 + Math.floor(rand() * 5000));
      const value = entity === 'observation' ? { value: Math.round(rand() * 1000) / 100, unit: 'pH', timepoint: `${Math.ceil(rand() * 12)} wk` } : { note: `change ${done + i}` };
      rows.push([
        lab.labId,
        pick(lab.userIds),
        new Date(now - Math.floor(rand() * twoYears)),
        action,
        entity,
        entityId,
        action === 'update' ? JSON.stringify(value) : null,
        JSON.stringify(value),
        action === 'void' ? 'Entered against the wrong sample' : null,
      ]);
    }
    statements.push(rows);
  }
  let next = 0;
  await Promise.all(
    Array.from({ length: 4 }, async () => {
      while (next < statements.length) {
        const rows = statements[next++];
        await pool.query('INSERT INTO audit_log (lab_id, user_id, at, action, entity, entity_id, old_value, new_value, reason) VALUES ?', [rows]);
      }
    }),
  );

  return {
    password: DEMO_PASSWORD,
    demo,
    labs,
    accounts: [...DEMO_LABS.flatMap((l) => l.people.map((p) => p.email)), ...labs.flatMap((l) => l.members.map((m) => m.email))],
    auditRows: auditTotal,
  };
}
