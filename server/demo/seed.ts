/**
 * Loads the invented demo labs into an empty database, in one transaction.
 * Everything here is made up for demonstration; none of it is reference data.
 */
import bcrypt from 'bcryptjs';
import { sql } from 'drizzle-orm';
import type { Db } from '../db/client';
import { labs, users } from '../db/schema';
import { audit } from '../services/audit';
import { ensureStarterAttributes } from '../services/labs';
import { DEMO_LABS, DEMO_PASSWORD } from './people';

let cachedHash: string | undefined;
const demoHash = () => (cachedHash ??= bcrypt.hashSync(DEMO_PASSWORD, 10));

export async function databaseIsEmpty(db: Db): Promise<boolean> {
  const [row] = await db.select({ n: sql<number>`count(*)` }).from(labs);
  return Number(row.n) === 0;
}

export interface SeededLab {
  id: number;
  name: string;
  members: Record<string, number>;
}

export async function seedDemo(db: Db): Promise<SeededLab[]> {
  const hash = demoHash();
  return db.transaction(async (tx) => {
    const out: SeededLab[] = [];
    for (const lab of DEMO_LABS) {
      const [{ id: labId }] = await tx.insert(labs).values({ name: lab.name, timeZone: lab.timeZone }).$returningId();
      const members: Record<string, number> = {};
      for (const p of lab.people) {
        const [{ id }] = await tx
          .insert(users)
          .values({ labId, email: p.email, name: p.name, role: p.role, passwordHash: hash })
          .$returningId();
        members[p.email] = id;
      }
      await ensureStarterAttributes(tx, labId);
      await audit(tx, { labId, userId: null, action: 'create', entity: 'lab', entityId: labId, newValue: { name: lab.name, demo: true } });
      out.push({ id: labId, name: lab.name, members });
    }
    return out;
  });
}
