/**
 * The audit trail in words (issue 13): every kind of entry the app writes reads as a sentence, with
 * field names in words and values as the screens show them, the raw record beside it, and the same
 * in the CSV. The app is driven through an action of every kind it writes; the demo seed gives the
 * imported rows. The wording checked here is the app's own; no outside source.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { LOCKOUT } from '../../server/auth/lockout';
import { runDataMigrations } from '../../server/db/data-migrations';
import { auditLog, invitations, labs, passwordResets, products, studies, users } from '../../server/db/schema';
import { hashToken } from '../../server/routes/account';
import { AUDIT_ACTION_LABELS } from '../../shared/audit-words';
import type { AuditRow } from '../../shared/schemas/records';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, DEMO_PASSWORD, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, uploadHourlyLogs, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;
let lab0: number;
let today: string;

/** Every (action, entity) pair the app writes (grep "action: '" server jobs). */
const WRITTEN = [
  'create:lab',
  'create:storage_condition',
  'create:invitation',
  'create:user',
  'create:product',
  'create:ingredient',
  'create:variant',
  'create:batch',
  'create:attribute',
  'create:study',
  'create:observation',
  'create:photo',
  'create:oos_investigation',
  'update:user',
  'update:lab',
  'update:product',
  'update:ingredient',
  'update:variant',
  'update:storage_condition',
  'update:attribute',
  'update:study',
  'update:observation',
  'update:checkpoint',
  'void:invitation',
  'void:observation',
  'import:formulas',
  'import:chamber_log',
  'import:study',
  'import:oos_investigation',
  'import:batch',
  'sign:decision',
  'sign_failed:study',
  'submit:study',
  'lockout:user',
  'amend:study',
  'migrate:study',
  'remeasure:oos_investigation',
  'confirm:oos_investigation',
  'close:oos_investigation',
];

const ok = (res: { status: number; body: unknown }, status = 200) => expect(res.status, JSON.stringify(res.body)).toBe(status);
const TOKEN = (c: string) => c.repeat(43);

interface Study {
  id: number;
  title: string;
  samples: { id: number; code: string; studyConditionId: number | null; batchId: number }[];
  checkpoints: { id: number; label: string; kind: string; studyConditionId: number | null }[];
  conditions: { id: number; role: string; name: string }[];
  attributes: { id: number; code: string }[];
}

let study: Study;
let productName: string;
let sampleA: string, sampleB: string;
let newMemberId: number;
const NEW_EMAIL = 'noor.haddad@larkspur.example';

beforeAll(async () => {
  t = await createTestApp({}, { demo: 'full' });
  lab0 = t.labs[0].id;
  // The lab writes dates day first: the sentences must too.
  await t.db.update(labs).set({ dateFormat: 'DD/MM/YYYY' }).where(eq(labs.id, lab0));
  [owner, formulator, technician, otherOwner] = await Promise.all([t.signIn(DEMO.owner), t.signIn(DEMO.formulator), t.signIn(DEMO.technician), t.signIn(DEMO.otherOwner)]);
  cat = await makeCatalogue(t.db, lab0, 'Audit cream');
  [{ name: productName }] = await t.db.select({ name: products.name }).from(products).where(eq(products.id, cat.productId));
  const [lab] = await t.db.select().from(labs).where(eq(labs.id, lab0));
  today = localDateInZone(new Date(), lab.timeZone);

  // ---------------------------------------------------------------- formulas
  const p = await formulator.post('/api/products', { name: 'Audit lotion', type: 'oil_in_water' });
  ok(p, 201);
  ok(await formulator.patch(`/api/products/${p.body.product.id}`, { notes: 'For the audit test' }));
  const water = await formulator.post('/api/ingredients', { tradeName: 'Audit water', inciName: 'Aqua', function: 'solvent' });
  ok(water, 201);
  const gum = await formulator.post('/api/ingredients', { tradeName: 'Audit xanthan', inciName: 'Xanthan Gum', function: 'thickener' });
  ok(gum, 201);
  ok(await formulator.patch(`/api/ingredients/${gum.body.ingredient.id}`, { supplier: 'Gum & Co', useMaxPercent: 1 }));
  const lines = (g: number) => [
    { ingredientId: water.body.ingredient.id, phase: 'A', percent: 100 - g },
    { ingredientId: gum.body.ingredient.id, phase: 'A', percent: g },
  ];
  const v = await formulator.post(`/api/products/${p.body.product.id}/variants`, { name: 'Light base', lines: lines(0.3) });
  ok(v, 201);
  const variantId = v.body.variant.id;
  ok(await formulator.put(`/api/variants/${variantId}`, { code: v.body.variant.code, name: 'Light base', lines: lines(0.5) }));
  ok(await formulator.post(`/api/variants/${variantId}/derive`, {}), 201);
  ok(await formulator.post(`/api/variants/${variantId}/batches`, { lotCode: 'AUD-001', madeOn: addDays(today, -30), sizeGrams: 1000, packaging: '50 mL PET jar' }), 201);

  // ---------------------------------------------------------------- storage and attributes
  const c = await formulator.post('/api/storage-conditions', { kind: 'constant', name: 'Audit oven', location: 'oven 3', setpointC: 40, toleranceC: 2 });
  ok(c, 201);
  ok(await formulator.put(`/api/storage-conditions/${c.body.condition.id}`, { kind: 'constant', name: 'Audit oven', location: 'oven 3', setpointC: 45, toleranceC: 2 }));
  ok(await formulator.patch(`/api/storage-conditions/${c.body.condition.id}/active`, { active: false, reason: 'Sent for repair' }));
  await uploadHourlyLogs(formulator, [[cat.conditions.oven45, 45]], addDays(today, -10), 48);
  const a = await formulator.post('/api/attributes', { code: 'firmness', name: 'Firmness', kind: 'measured', unit: 'N', decimals: 1, defaultCriterion: { kind: 'range', min: 1, max: 5 } });
  ok(a, 201);
  ok(await formulator.patch(`/api/attributes/${a.body.attribute.id}`, { active: false }));

  // ---------------------------------------------------------------- a study from plan to signature
  const plan = planFor(cat, addDays(today, -20));
  plan.title = 'Audit study';
  plan.attributes.push({ attributeId: cat.attributeIds.viscosity, criterion: { kind: 'change_pct', max: 20 } } as never);
  // Week 2 at 45 °C has closed by today: it is marked missed.
  plan.conditions[1] = { ...plan.conditions[1], template: 'custom', offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 2 }, { unit: 'week', n: 4 }] };
  const draft = await formulator.post('/api/studies', plan);
  ok(draft, 201);
  const id = draft.body.study.id;
  ok(await formulator.put(`/api/studies/${id}`, { ...plan, title: 'Audit study, 45 °C', samplesPerCell: 1 }));
  const started = await formulator.post(`/api/studies/${id}/start`);
  ok(started);
  study = started.body.study;
  const attr = (code: string) => study.attributes.find((x) => x.code === code)!.id;
  const cond = (role: string) => study.conditions.find((x) => x.role === role)!;
  const pull = (role: string, label: string) => study.checkpoints.find((x) => x.studyConditionId === cond(role).id && x.label === label)!;
  const initial = study.checkpoints.find((x) => x.kind === 'initial')!;
  const [bA, bB] = cat.batchIds;
  for (const s of study.samples.filter((x) => x.studyConditionId == null)) {
    ok(
      await technician.put(`/api/samples/${s.code}/checkpoints/${initial.id}/observations`, {
        entries: [
          { studyAttributeId: attr('ph'), value: 5.5 },
          { studyAttributeId: attr('separation'), value: 0 },
          { studyAttributeId: attr('odor'), value: 'no_change' },
          { studyAttributeId: attr('viscosity'), value: 20000 },
        ],
      }),
    );
  }
  const oven = (b: number) => study.samples.find((x) => x.studyConditionId === cond('accelerated').id && x.batchId === b)!;
  const fridge = (b: number) => study.samples.find((x) => x.studyConditionId === cond('control').id && x.batchId === b)!;
  sampleA = oven(bA).code;
  sampleB = oven(bB).code;
  const week1 = pull('accelerated', 'Week 1').id;
  for (const b of [bA, bB]) {
    ok(await technician.put(`/api/samples/${fridge(b).code}/checkpoints/${pull('control', 'Week 1').id}/observations`, { entries: [{ studyAttributeId: attr('odor'), value: 'no_change' }] }));
  }
  const saved = await technician.put(`/api/samples/${sampleA}/checkpoints/${week1}/observations`, {
    entries: [
      { studyAttributeId: attr('ph'), value: 5.45 },
      { studyAttributeId: attr('separation'), value: 1 },
      { studyAttributeId: attr('odor'), value: 'slight' },
      { studyAttributeId: attr('viscosity'), value: 21000, method: { spindle: 'RV-5', speed: 10 } },
    ],
  });
  ok(saved);
  const current = (code: string) => saved.body.sheet.attributes.find((x: { attribute: { code: string } }) => x.attribute.code === code).current;
  ok(await technician.post(`/api/observations/${current('ph').id}/corrections`, { value: 5.5, reason: 'Read the wrong meter display' }));
  ok(await technician.post(`/api/observations/${current('separation').id}/void`, { reason: 'Graded the wrong jar' }));
  // A failing pH opens an investigation: re-measured, confirmed at the bench, closed as a lab error.
  const failing = await technician.put(`/api/samples/${sampleB}/checkpoints/${week1}/observations`, { entries: [{ studyAttributeId: attr('ph'), value: 4.8 }] });
  ok(failing);
  const invId = failing.body.sheet.attributes.find((x: { attribute: { code: string } }) => x.attribute.code === 'ph').current.investigation.id;
  ok(await technician.post(`/api/investigations/${invId}/remeasure`, { value: 4.85, comment: 'Fresh buffer, electrode rinsed' }));
  ok(await technician.post(`/api/investigations/${invId}/confirm`, { comment: 'Two readings agree; the jar looks normal' }));
  const checks = { instrument: 'Meter calibrated at 4, 7, 10', method: 'Neat, as at the initial test', sample: 'Right jar, mixed', calculation: 'None: direct reading' };
  ok(await formulator.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'invalidated', reason: 'The pH 7 buffer was expired', retest: { value: 5.45 } }));
  const jpeg = await sharp({ create: { width: 64, height: 48, channels: 3, background: '#ccc' } }).jpeg().toBuffer();
  ok(await technician.agent.post(`/api/samples/${sampleA}/checkpoints/${week1}/photos`).set('X-Keepwell-Request', '1').attach('photos', jpeg, 'jar-a.jpg'), 201);
  ok(await technician.post(`/api/checkpoints/${pull('accelerated', 'Week 2').id}/missed`, { reason: 'Oven door left open over the weekend' }));
  ok(await formulator.post(`/api/studies/${id}/amendments`, { kind: 'add_checkpoint', studyConditionId: cond('accelerated').id, offset: { unit: 'week', n: 6 }, reason: 'Watch the pH trend' }), 201);
  ok(
    await formulator.post(`/api/studies/${id}/submit`, {
      summary: 'Both variants held at 45 °C.',
      proposals: cat.variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 24, paoMonths: 12 })),
      openCheckpointsReason: 'Ending early to decide on the pilot',
    }),
  );
  expect((await owner.post(`/api/studies/${id}/decisions`, { variantId: cat.variantIds[0], outcome: 'released', shelfLifeMonths: 24, paoMonths: 12, comment: 'Pilot lot data', password: 'not-my-password' })).status).toBe(403);
  ok(
    await owner.post(`/api/studies/${id}/decisions`, {
      variantId: cat.variantIds[0],
      outcome: 'released',
      shelfLifeMonths: 24,
      paoMonths: 12,
      comment: 'Real-time data of the pilot lot supports it',
      password: DEMO_PASSWORD,
    }),
    201,
  );
  // An owner corrects a reading during the review.
  ok(await owner.post(`/api/observations/${current('viscosity').id}/corrections`, { value: 20500, reason: 'Spindle speed was misread' }));

  // ---------------------------------------------------------------- members and the lab
  const inv = await owner.post('/api/invitations', { email: NEW_EMAIL, role: 'technician' });
  ok(inv, 201);
  await t.db.update(invitations).set({ tokenHash: hashToken(TOKEN('a')) }).where(eq(invitations.id, inv.body.invitation.id));
  const accepted = await t.client().post(`/api/invitations/by-token/${TOKEN('a')}/accept`, { name: 'Noor Haddad', password: 'lamp river copper field' });
  ok(accepted, 201);
  newMemberId = accepted.body.member.id;
  ok(await owner.patch(`/api/members/${newMemberId}`, { role: 'formulator' }));
  ok(await owner.post(`/api/members/${newMemberId}/disable`));
  ok(await owner.post(`/api/members/${newMemberId}/enable`));
  const other = await owner.post('/api/invitations', { email: 'not.coming@larkspur.example', role: 'technician' });
  ok(other, 201);
  ok(await owner.delete(`/api/invitations/${other.body.invitation.id}`), 204);
  const noor = await t.signIn(NEW_EMAIL, 'lamp river copper field');
  ok(await noor.post('/api/account/password', { currentPassword: 'lamp river copper field', newPassword: 'heather on the hill' }));
  ok(await noor.patch('/api/me/preferences', { remindersEnabled: false }));
  await t.db.insert(passwordResets).values({ userId: newMemberId, tokenHash: hashToken(TOKEN('b')), createdAt: new Date(), expiresAt: new Date(Date.now() + 3_600_000) });
  ok(await t.client().post(`/api/password-resets/${TOKEN('b')}`, { password: 'lighthouse at dawn' }));
  ok(await owner.patch('/api/lab/reminder-settings', { timeZone: lab.timeZone, reminderHour: lab.reminderHour === 8 ? 9 : 8 }));
  for (let i = 0; i < LOCKOUT.maxFailures; i++) await t.client().post('/api/auth/sign-in', { email: NEW_EMAIL, password: `wrong guess ${i}` });

  // ---------------------------------------------------------------- a study from before the initial test, migrated
  await t.db.insert(studies).values({ labId: lab0, productId: cat.productId, title: 'Legacy study', status: 'running', startDate: addDays(today, -40), createdBy: t.labs[0].members[DEMO.formulator] });
  await runDataMigrations(t.db);

  // ---------------------------------------------------------------- the other lab
  ok(await otherOwner.post('/api/products', { name: 'Copperbeech secret balm', type: 'anhydrous_balm' }), 201);
}, 240_000);
afterAll(async () => t?.close());

async function allRows(c: Client, query = ''): Promise<AuditRow[]> {
  const out: AuditRow[] = [];
  for (let page = 1; ; page++) {
    const res = await c.get(`/api/audit?page=${page}${query}`);
    ok(res);
    out.push(...res.body.rows);
    if (!res.body.more) return out;
  }
}

const find = (rows: AuditRow[], action: string, entity: string, pred: (r: AuditRow) => boolean = () => true) => {
  const r = rows.find((x) => x.action === action && x.entity === entity && pred(x));
  expect(r, `${action} ${entity}`).toBeDefined();
  return r!;
};
const nv = (r: AuditRow) => (r.newValue ?? {}) as Record<string, unknown>;

describe('the audit trail in words', () => {
  it('has an entry of every kind the app writes, each a sentence with a known action label', async () => {
    const rows = await allRows(owner);
    const kinds = new Set(rows.map((r) => `${r.action}:${r.entity}`));
    for (const k of WRITTEN) expect(kinds, k).toContain(k);
    const labels = new Set(Object.values(AUDIT_ACTION_LABELS));
    for (const r of rows) {
      const s = r.sentence;
      const where = `${r.action} ${r.entity} #${r.id}: ${s}`;
      expect(labels.has(r.actionLabel), where).toBe(true);
      expect(r.actionLabel, where).toBe(AUDIT_ACTION_LABELS[r.action as keyof typeof AUDIT_ACTION_LABELS]);
      expect(s.length, where).toBeGreaterThan(15);
      expect(s, where).toMatch(/^[A-Z]/);
      expect(s, where).toMatch(/[.…]$/);
      // No raw keys (signedAt, variantId, shelfLifeMonths; "pH" is a word), no stored enum values, no JSON.
      expect(s, where).not.toMatch(/\b[a-z]{2,}[A-Z]\w*/);
      expect(s, where).not.toMatch(/\b[a-z]+_[a-z_]+\b/);
      expect(s, where).not.toMatch(/[{}[\]]/);
      expect(s, where).not.toMatch(/\b(undefined|null|NaN|true|false)\b|\[object/);
      expect(s, where).not.toMatch(/\d{4}-\d{2}-\d{2}/); // dates in the lab's format (DD/MM/YYYY)
      // The raw record stays beside the sentence.
      expect(r).toHaveProperty('oldValue');
      expect(r).toHaveProperty('newValue');
    }
  });

  it('reads a recorded value with its unit and decimals, grades with their labels and compared levels as words', async () => {
    const rows = await allRows(owner, `&studyId=${study.id}`);
    const created = (code: string) => find(rows, 'create', 'observation', (r) => nv(r).sample === sampleA && nv(r).attribute === code && nv(r).checkpoint === 'Week 1');
    expect(created('viscosity').sentence).toBe(`Recorded Viscosity for sample ${sampleA} at Week 1 in “Audit study, 45 °C”: 21000 mPa·s (pass), method Spindle RV-5 · Speed 10 rpm.`);
    expect(created('ph').sentence).toBe(`Recorded pH for sample ${sampleA} at Week 1 in “Audit study, 45 °C”: 5.45 (pass).`);
    expect(created('odor').sentence).toMatch(/: slight \((pass|cannot judge yet)\)\.$/);
    expect(created('separation').sentence).toMatch(/: 1 \(.+\) \((pass|fail)\)\.$/);
  });

  it('reads a correction with its old and new values and the reason, and a void with what was voided', async () => {
    const rows = await allRows(owner, `&studyId=${study.id}`);
    const corr = find(rows, 'update', 'observation', (r) => r.reason === 'Read the wrong meter display');
    expect(corr.sentence).toBe(`Corrected pH for sample ${sampleA} at Week 1 in “Audit study, 45 °C” from 5.45 (pass) to 5.50 (pass). Reason: Read the wrong meter display.`);
    expect(corr.actionLabel).toBe('Changed');
    const voided = find(rows, 'void', 'observation');
    expect(voided.sentence).toMatch(new RegExp(`^Voided the reading of Separation for sample ${sampleA} at Week 1 in “Audit study, 45 °C”: 1 \\(.+\\) \\((pass|fail)\\)\\. Reason: Graded the wrong jar\\.$`));
    const retest = find(rows, 'update', 'observation', (r) => nv(r).retestOfInvestigation != null);
    expect(retest.sentence).toBe(
      `Replaced the result of pH for sample ${sampleB} at Week 1 in “Audit study, 45 °C” with the valid re-test, from 4.80 (fail) to 5.45 (pass). Reason: Out-of-specification result invalidated as a lab error; valid re-test used: The pH 7 buffer was expired.`,
    );
    expect(find(rows, 'remeasure', 'oos_investigation').sentence).toBe(
      `Re-measured pH for sample ${sampleB} at Week 1 in “Audit study, 45 °C” at the bench: first 4.80 (fail), again 4.85 (fail). Comment: Fresh buffer, electrode rinsed.`,
    );
    expect(find(rows, 'close', 'oos_investigation').sentence).toBe(
      `Closed the out-of-specification investigation of pH for sample ${sampleB} at Week 1 in “Audit study, 45 °C”: invalidated as a lab error; the re-test 5.45 (pass) is used. Reason: The pH 7 buffer was expired.`,
    );
  });

  it('reads a signature with its outcome and months, and a refused one', async () => {
    const rows = await allRows(owner, `&studyId=${study.id}`);
    const signed = find(rows, 'sign', 'decision');
    expect(signed.sentence).toBe(`Signed the release decision for ${productName} A: released, 24 months, 12 months after opening. Comment: Real-time data of the pilot lot supports it.`);
    expect(signed.actionLabel).toBe('Signed');
    const refused = find(rows, 'sign_failed', 'study');
    expect(refused.sentence).toBe('Signature refused on “Audit study, 45 °C”: wrong password at signing.');
    expect(refused.actionLabel).toBe('Signature refused');
    const submitted = find(rows, 'submit', 'study');
    expect(submitted.sentence).toMatch(/^Submitted “Audit study, 45 °C” for review with \d+ checkpoints still open, proposing A: 24 months, 12 months after opening; B: 24 months, 12 months after opening\. Why it ends early: Ending early to decide on the pilot\.$/);
    expect(submitted.actionLabel).toBe('Submitted for review');
    expect(find(rows, 'update', 'checkpoint').sentence).toMatch(/^Marked Week 2 at .+ in “Audit study, 45 °C” as missed\. Reason: Oven door left open over the weekend\.$/);
  });

  it('reads a lockout, member changes and dates in the lab’s format', async () => {
    const rows = await allRows(owner, `&userId=${newMemberId}`);
    const lock = find(rows, 'lockout', 'user');
    expect(lock.sentence).toBe(`Locked out Noor Haddad for 15 minutes after ${LOCKOUT.maxFailures} wrong passwords in a row; the last attempt came from ${nv(lock).ip}.`);
    expect(lock.actionLabel).toBe('Locked out');
    expect(find(rows, 'update', 'user', (r) => nv(r).remindersEnabled === false).sentence).toBe('Turned reminder e-mails off for themselves.');
    expect(find(rows, 'create', 'user').sentence).toBe(`Joined the lab as technician by accepting an invitation: Noor Haddad (${NEW_EMAIL}).`);
    const all = await allRows(owner);
    expect(find(all, 'update', 'user', (r) => nv(r).role === 'formulator' && r.entityId === String(newMemberId)).sentence).toBe('Changed the role of Noor Haddad from technician to formulator.');
    const [d, m, y] = [addDays(today, -30).slice(8, 10), addDays(today, -30).slice(5, 7), addDays(today, -30).slice(0, 4)];
    expect(find(all, 'create', 'batch', (r) => nv(r).lotCode === 'AUD-001').sentence).toBe(`Recorded batch AUD-001 of Audit lotion A, made ${d}/${m}/${y}: 1000 g, 50 mL PET jar.`);
    expect(find(all, 'update', 'storage_condition', (r) => 'setpointC' in nv(r)).sentence).toBe('Changed the storage condition “Audit oven”: set point from 40 °C to 45 °C.');
    expect(find(all, 'update', 'storage_condition', (r) => nv(r).active === false).sentence).toBe('Retired the storage condition “Audit oven”. Reason: Sent for repair.');
    expect(find(all, 'update', 'variant').sentence).toBe('Changed variant A of “Audit lotion”: Audit water from 99.7 % to 99.5 %; Audit xanthan from 0.3 % to 0.5 %.');
    expect(find(all, 'migrate', 'study').sentence).toMatch(/^Migrated “Legacy study” to one initial test per batch: /);
  });

  it('never shows another lab’s rows', async () => {
    const mine = await allRows(owner);
    expect(mine.some((r) => /Copperbeech/.test(r.sentence) || JSON.stringify(r.newValue ?? '').includes('Copperbeech'))).toBe(false);
    const theirs = await allRows(otherOwner);
    expect(theirs.some((r) => r.sentence === 'Created the product “Copperbeech secret balm” (anhydrous balm or butter).')).toBe(true);
    const mineIds = new Set(mine.map((r) => r.id));
    expect(theirs.some((r) => mineIds.has(r.id))).toBe(false);
    expect(theirs.some((r) => r.sentence.includes('Audit study') || r.sentence.includes('Noor Haddad'))).toBe(false);
    const [row] = await t.db.select({ n: auditLog.id }).from(auditLog).where(eq(auditLog.labId, t.labs[1].id)).limit(1);
    expect(row).toBeDefined();
    const [member] = await t.db.select({ labId: users.labId }).from(users).where(eq(users.id, newMemberId));
    expect(member.labId).toBe(lab0);
  });

  it('the PDF report’s audit summary counts entries under the same action labels', async () => {
    const res = await owner.agent.get(`/api/studies/${study.id}/report.pdf`).buffer(true).parse((r, cb) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    ok(res);
    const file = join(mkdtempSync(join(tmpdir(), 'kw-audit-report-')), 'report.pdf');
    writeFileSync(file, res.body as Buffer);
    const text = execFileSync('pdftotext', ['-layout', file, '-']).toString();
    const summary = text.slice(text.indexOf('Audit summary'));
    for (const s of ['Signed · decision', 'Signature refused · study', 'Submitted for review · study', 'Created · reading', 'Voided · reading', 'Re-measured · out-of-specification investigation']) {
      expect(summary).toContain(s);
    }
    expect(summary).not.toMatch(/sign failed|sign_failed|\bcreate observation\b/);
  });

  it('the CSV keeps the raw columns and adds the action label and the sentence', async () => {
    const csv = await owner.get(`/api/audit.csv?studyId=${study.id}`);
    ok(csv);
    const lines = csv.text.split('\r\n');
    expect(lines[0]).toBe('time_utc,who,action,entity,entity_id,old_value,new_value,reason,action_label,sentence');
    expect(csv.text).toContain(`Signed the release decision for ${productName} A: released, 24 months, 12 months after opening.`);
    expect(csv.text).toContain('"{""value"":5.45');
  });
});
