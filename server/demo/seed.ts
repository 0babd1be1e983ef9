/**
 * Loads the invented demo labs into an empty database, in one transaction.
 * Everything here is made up for demonstration; none of it is reference data.
 */
import bcrypt from 'bcryptjs';
import { sql } from 'drizzle-orm';
import type { Db } from '../db/client';
import { labs, users } from '../db/schema';
import { folderStore, type FileStore } from '../files';
import { audit } from '../services/audit';
import { ensureStarterAttributes } from '../services/labs';
import { DEMO_LABS, DEMO_PASSWORD } from './people';
import { seedFormulas } from './formulas';
import { seedStorage } from './storage';
import { seedStudies } from './studies';
import { seedProductFile } from './product-file';
import { seedColourPhotos } from './colour-photos';
import { BCRYPT_ROUNDS } from '../auth/password-policy';

let cachedHash: string | undefined;
const demoHash = () => (cachedHash ??= bcrypt.hashSync(DEMO_PASSWORD, BCRYPT_ROUNDS));

export async function databaseIsEmpty(db: Db): Promise<boolean> {
  const [row] = await db.select({ n: sql<number>`count(*)` }).from(labs);
  return Number(row.n) === 0;
}

export interface SeededLab {
  id: number;
  name: string;
  members: Record<string, number>;
}

export interface SeedOptions {
  /**
   * 'people' (tests): labs, members and starter attributes only.
   * 'full' (npm start): also the catalogue, storage conditions with a chamber log,
   * three running studies with observations and generated photos.
   */
  content?: 'people' | 'full';
  /** Where generated demo photos go (full content only): the store, or else a folder (default .data/uploads). */
  files?: FileStore;
  uploadsDir?: string;
  now?: Date;
}

export async function seedDemo(db: Db, opts: SeedOptions = {}): Promise<SeededLab[]> {
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
      if (opts.content === 'full') {
        const byRole = (role: string) => members[lab.people.find((p) => p.role === role)?.email ?? ''];
        const author = byRole('formulator') ?? byRole('owner');
        const conditions = await seedStorage(tx, labId, author);
        if (byRole('formulator')) {
          const catalogue = await seedFormulas(tx, labId, author, opts.now);
          await seedStudies(
            tx,
            labId,
            lab.timeZone,
            { owner: byRole('owner'), formulator: byRole('formulator'), technician: byRole('technician') },
            catalogue,
            conditions,
            opts.files ?? folderStore(opts.uploadsDir ?? '.data/uploads'),
            opts.now,
          );
          await seedProductFile(tx, labId, byRole('formulator'), catalogue, opts.files ?? folderStore(opts.uploadsDir ?? '.data/uploads'), opts.now);
          await seedColourPhotos(tx, labId, byRole('technician') ?? author, opts.files ?? folderStore(opts.uploadsDir ?? '.data/uploads'));
        }
      }
      await audit(tx, { labId, userId: null, action: 'create', entity: 'lab', entityId: labId, newValue: { name: lab.name, demo: true } });
      out.push({ id: labId, name: lab.name, members });
    }
    return out;
  });
}
