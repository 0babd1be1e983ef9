/**
 * A bench that keeps working without a connection (issue 18), in headless Chromium at tablet size
 * with the service worker allowed: the Bench loads online (the service worker precaches the app, the
 * Bench keeps its copy in IndexedDB), the context goes offline, two samples are recorded (one with a
 * photo) into the device's outbox, the page reloads offline with the Bench and the outbox still
 * there, and back online everything is saved once with both times in the history. A second test:
 * a cell recorded meanwhile by someone else (409), kept as a correction with a reason or dropped.
 * A third measures how long the outbox takes to send 50 saves (a figure printed, not asserted).
 */
import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { and, eq, isNotNull, sql } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext, Page } from 'playwright-core';
import { auditLog, observations, photos } from '../../server/db/schema';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import type { RecordSheet, RevisionView } from '../../shared/schemas/records';
import { DEMO, DEMO_PASSWORD, type Client } from '../helpers/app';
import { SHOTS, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, type Catalogue } from '../helpers/fixtures';

const TABLET = { width: 1024, height: 768 } as const;

let rig: BrowserRig;
let formulator: Client;
let technician: Client;
let owner: Client;
let cat: Catalogue;
let study: StudyDetail;
let today: string;
/** The study of the 50 saves (test 3); its control's Week 1 is left for test 4. */
let big: StudyDetail;

const attr = (s: StudyDetail, code: string) => s.attributes.find((a) => a.code === code)!.id;
const week1 = (s: StudyDetail, cond: number) => s.checkpoints.find((c) => c.label === 'Week 1' && c.studyConditionId === s.conditions[cond].id)!;
const samplesIn = (s: StudyDetail, cond: number) => s.samples.filter((x) => x.studyConditionId === s.conditions[cond].id).sort((a, b) => a.labelOrder - b.labelOrder);
const retained = (s: StudyDetail) => s.samples.filter((x) => x.studyConditionId == null);
/** Invented readings: pH 5.30 (range 4.5–6.5), odor unchanged, pack intact. */
const fullSet = (s: StudyDetail, ph = 5.3) => [
  { studyAttributeId: attr(s, 'ph'), value: ph, method: { method: 'neat' } },
  { studyAttributeId: attr(s, 'odor'), value: 'no_change' },
  { studyAttributeId: attr(s, 'pack_integrity'), value: true },
];

/** A running study started 7 days ago (Week 1 due today), its initial test and, when asked, the control's Week 1 recorded. */
async function startStudy(title: string, samplesPerCell: number, recordControl: boolean): Promise<StudyDetail> {
  const plan = {
    productId: cat.productId,
    title,
    startDate: addDays(today, -7),
    batchIds: cat.batchIds,
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
      { conditionId: cat.conditions.oven45, role: 'accelerated', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
    ],
    attributes: [
      { attributeId: cat.attributeIds.ph, criterion: { kind: 'range', min: 4.5, max: 6.5 } },
      { attributeId: cat.attributeIds.odor, criterion: { kind: 'worst_compared', level: 'slight' } },
      { attributeId: cat.attributeIds.pack_integrity, criterion: { kind: 'must_pass' } },
    ],
    samplesPerCell,
    containerDescription: '50 mL PET jar, PP lid',
    fillGrams: 45,
  };
  const created = await formulator.post('/api/studies', plan);
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  const s: StudyDetail = started.body.study;
  const initial = s.checkpoints.find((c) => c.kind === 'initial')!;
  for (const r of retained(s)) expect((await technician.put(`/api/samples/${r.code}/checkpoints/${initial.id}/observations`, { entries: fullSet(s) })).status).toBe(200);
  if (recordControl) for (const c of samplesIn(s, 0)) expect((await technician.put(`/api/samples/${c.code}/checkpoints/${week1(s, 0).id}/observations`, { entries: fullSet(s, 5.35) })).status).toBe(200);
  return s;
}

beforeAll(async () => {
  rig = await startBrowserRig();
  [formulator, technician, owner] = await Promise.all([rig.t.signIn(DEMO.formulator), rig.t.signIn(DEMO.technician), rig.t.signIn(DEMO.owner)]);
  cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Marigold balm');
  today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  // Two oven samples per batch: the first test records two, the second test one more.
  study = await startStudy('Marigold balm, offline pull', 2, true);
});
afterAll(async () => rig?.close());

async function sheetOf(code: string, checkpointId: number): Promise<RecordSheet> {
  return (await technician.get(`/api/samples/${code}/checkpoints/${checkpointId}`)).body.sheet;
}

/** Types pH (neat), odor and pack integrity on the Record page. */
async function fill(page: Page, ph: string) {
  await page.getByTestId('value-ph').fill(ph);
  await page.getByTestId('attr-ph').getByTestId('method-method').locator('[data-value="neat"]').click();
  await page.getByTestId('value-odor').locator('[data-value="no_change"]').click();
  await page.getByTestId('value-pack_integrity').locator('[data-value="true"]').click();
}

/** Problems expected while offline: failed requests and the browser's own network errors. */
const offlineNoise = (p: string) => /request failed|ERR_INTERNET_DISCONNECTED|Failed to load resource|net::ERR/.test(p);

/** The offline kit (its own chunk) has loaded: with service workers blocked, it must be loaded before going offline. */
async function kitLoaded(page: Page) {
  await page.waitForFunction(() => performance.getEntriesByType('resource').some((e) => /\/offline-kit-[^/]+\.js$/.test(e.name)), null, { timeout: 15_000 });
  await page.waitForTimeout(200);
}

async function newTabletPage(serviceWorkers: 'allow' | 'block'): Promise<{ context: BrowserContext; page: Page; problems: string[] }> {
  const context = await rig.browser.newContext({ viewport: TABLET, serviceWorkers });
  const page = await context.newPage();
  return { context, page, problems: watchPage(page) };
}

describe('the Bench offline', () => {
  it('records two samples and a photo offline, survives a reload offline, and sends each once when back online', async () => {
    const { context, page, problems } = await newTabletPage('allow');
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    // The service worker controls the page once it has precached the app; the Bench has kept its copy.
    await page.waitForFunction(() => navigator.serviceWorker.controller !== null, null, { timeout: 60_000 });
    await expect.poll(() => page.evaluate(() => caches.keys().then((k) => k.length)), { timeout: 30_000 }).toBeGreaterThan(0);
    // The copy is kept once the worker controls the page: wait for its sheets in IndexedDB.
    const keptSheets = () =>
      page.evaluate(
        () =>
          new Promise<number>((resolve) => {
            const open = indexedDB.open('keepwell-offline');
            open.onsuccess = () => {
              const db = open.result;
              if (!db.objectStoreNames.contains('copy')) return resolve(0);
              const req = db.transaction('copy').objectStore('copy').count();
              req.onsuccess = () => resolve(req.result);
              req.onerror = () => resolve(0);
            };
            open.onerror = () => resolve(0);
          }),
      );
    await expect.poll(keptSheets, { timeout: 30_000 }).toBeGreaterThanOrEqual(5); // the Bench and 4 oven sheets
    const [s1, s2] = samplesIn(study, 1);
    const cp = week1(study, 1);

    await context.setOffline(true);
    await page.reload();
    await page.getByTestId('bench-offline-copy').waitFor();
    expect(await page.getByTestId('offline-note').textContent()).toContain('Offline.');
    await page.getByTestId(`bench-sample-${s1.code}`).click();
    await expect.poll(() => page.getByTestId('record-sample-code').textContent()).toBe(s1.code);
    // The batch's initial value and the control read the same day are on the sheet, from the copy.
    expect(await page.getByTestId('attr-ph').getByTestId('ref-baseline').textContent()).toContain('5.3');
    expect(await page.getByTestId('attr-odor').getByTestId('ref-control').textContent()).toContain('no change');
    await fill(page, '5.41');
    await page.getByTestId('save').click();
    await page.getByTestId('attr-ph').getByTestId('on-device').waitFor();
    await expect.poll(() => page.getByTestId('outbox-count').textContent()).toContain('1 saved on this device, not yet sent');
    const png = await sharp({ create: { width: 96, height: 64, channels: 3, background: '#e9dcc0' } }).png().toBuffer();
    await page.getByTestId('photo-input').setInputFiles({ name: 'balm-jar.png', mimeType: 'image/png', buffer: png });
    await page.getByTestId('photo-kept').waitFor();
    await expect.poll(() => page.getByTestId('outbox-count').textContent()).toContain('2 saved on this device');
    await page.screenshot({ path: join(SHOTS, 'offline-record-saved-on-device.png'), fullPage: true });

    // The next sample by its code, typed as from the label: found in the Bench's copy.
    await page.getByRole('link', { name: 'Bench' }).first().click();
    await page.getByTestId('find-sample-input').fill(s2.code);
    await page.getByTestId('find-sample-go').click();
    await expect.poll(() => page.getByTestId('record-sample-code').textContent()).toBe(s2.code);
    await fill(page, '5.52');
    await page.getByTestId('save').click();
    await page.getByTestId('attr-ph').getByTestId('on-device').waitFor();
    await expect.poll(() => page.getByTestId('outbox-count').textContent()).toContain('3 saved on this device');

    // Reloaded offline: the Bench and the outbox are still there.
    await page.goto(`${rig.baseUrl}/bench`);
    await page.getByTestId('bench-offline-copy').waitFor();
    await expect.poll(() => page.getByTestId('outbox-count').textContent()).toContain('3 saved on this device');
    expect(await page.getByTestId(`bench-sample-${s1.code}`).textContent()).toContain('3 of 3');
    await page.screenshot({ path: join(SHOTS, 'offline-bench-reloaded.png'), fullPage: true });
    // At phone size the outbox bar still shows its count and its button, and nothing scrolls sideways.
    await page.setViewportSize({ width: 390, height: 844 });
    expect(await page.getByTestId('outbox-count').isVisible()).toBe(true);
    expect(await page.getByTestId('outbox-open').isVisible()).toBe(true);
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
    await page.screenshot({ path: join(SHOTS, 'offline-bench-phone.png') });
    await page.setViewportSize(TABLET);
    await page.getByTestId('outbox-open').click();
    await page.getByTestId('outbox-dialog').waitFor();
    expect(await page.getByTestId(`outbox-entry-${s1.code}`).count()).toBe(2); // the save and the photo
    await page.screenshot({ path: join(SHOTS, 'offline-outbox-list.png') });
    await page.keyboard.press('Escape');
    // Nothing reached the server yet.
    expect((await sheetOf(s1.code, cp.id)).attributes.every((a) => a.current === null)).toBe(true);

    // Back online: the outbox sends by itself, readings first, then the photo.
    const offlineProblems = problems.splice(0);
    expect(offlineProblems.filter((p) => !offlineNoise(p)), offlineProblems.join('\n')).toEqual([]);
    await context.setOffline(false);
    await expect.poll(() => page.getByTestId('outbox-bar').count(), { timeout: 30_000 }).toBe(0);
    const one = await sheetOf(s1.code, cp.id);
    const two = await sheetOf(s2.code, cp.id);
    expect(one.attributes.map((a) => a.current?.value)).toEqual([5.41, 'no_change', true]);
    expect(two.attributes.map((a) => a.current?.value)).toEqual([5.52, 'no_change', true]);
    expect(one.photos).toHaveLength(1);
    // Saved once: six readings with their client ids, six audit rows, one photo.
    const db = rig.t.db;
    const rows = await db.select().from(observations).where(and(eq(observations.checkpointId, cp.id), isNotNull(observations.clientId)));
    expect(rows).toHaveLength(6);
    expect(new Set(rows.map((r) => r.clientId)).size).toBe(2);
    const [audits] = await db
      .select({ n: sql<number>`count(*)` })
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'observation'), sql`${auditLog.entityId} IN (${sql.join(rows.map((r) => sql`${String(r.id)}`), sql`, `)})`));
    expect(Number(audits.n)).toBe(6);
    expect(await db.select().from(photos).where(isNotNull(photos.clientId))).toHaveLength(1);

    // Both times in the history: the device's and the server's.
    const ph = one.attributes[0].current!;
    expect(ph.device?.recordedAt).toBeTruthy();
    expect(new Date(ph.recordedAt).getTime()).toBeGreaterThanOrEqual(new Date(ph.device!.recordedAt).getTime());
    const history = (await technician.get(`/api/observations/${ph.id}/history`)).body.history as RevisionView[];
    expect(history.at(-1)?.device?.recordedAt).toBe(ph.device!.recordedAt);
    await page.goto(`${rig.baseUrl}/samples/${s1.code}/checkpoints/${cp.id}`);
    await page.getByTestId('attr-ph').getByTestId('device-time').waitFor();
    await page.getByTestId('history-ph').click();
    await page.getByTestId('history-device-time').waitFor();
    await page.waitForTimeout(400); // the dialog's opening animation
    await page.screenshot({ path: join(SHOTS, 'offline-history-both-times.png') });
    const audit = (await owner.get(`/api/audit?studyId=${study.id}`)).body.rows as { entityId: string; sentence: string }[];
    expect(audit.find((r) => r.entityId === String(ph.id))?.sentence).toMatch(/recorded on the device at .+ sent from its outbox/);
    expect(problems.filter((p) => !offlineNoise(p))).toEqual([]);
    await context.close();
  });

  it('a cell recorded meanwhile by someone else: both values shown, kept as a correction with a reason, or dropped', async () => {
    const { context, page, problems } = await newTabletPage('block');
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    const [, , s3, s4] = samplesIn(study, 1);
    const cp = week1(study, 1);
    for (const [i, s, ph, theirPh] of [
      [1, s3, '5.61', 5.6],
      [2, s4, '5.71', 5.7],
    ] as const) {
      await page.goto(`${rig.baseUrl}/samples/${s.code}/checkpoints/${cp.id}`);
      await page.getByTestId('value-ph').waitFor();
      await kitLoaded(page);
      await context.setOffline(true);
      await fill(page, ph);
      await page.getByTestId('save').click();
      await page.getByTestId('attr-ph').getByTestId('on-device').waitFor();
      // Meanwhile a formulator records the same sample online: pH 5.60 and 5.70.
      const theirs = await formulator.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, { entries: fullSet(study, theirPh) });
      expect(theirs.status).toBe(200);
      await context.setOffline(false);
      await expect.poll(() => page.getByTestId('outbox-attention').textContent().catch(() => ''), { timeout: 30_000 }).toContain(`${i} need`);
    }
    await page.getByTestId('outbox-open').click();
    await page.getByTestId('outbox-dialog').waitFor();
    const entry3 = page.getByTestId(`outbox-entry-${s3.code}`);
    expect(await entry3.getByTestId('outbox-mine').textContent()).toContain('5.61');
    expect(await entry3.getByTestId('outbox-theirs').textContent()).toContain('5.60');
    expect(await entry3.getByTestId('outbox-conflict').locator('tbody tr').count()).toBe(1); // odor and pack were the same
    await page.screenshot({ path: join(SHOTS, 'offline-conflict.png') });
    // A reason is required.
    await entry3.getByTestId('outbox-keep').click();
    await entry3.getByText('Give a reason').waitFor();
    await entry3.getByTestId('outbox-reason-input').fill('Read on the calibrated meter; the other reading was a different jar');
    await entry3.getByTestId('outbox-keep').click();
    await expect.poll(() => entry3.count(), { timeout: 15_000 }).toBe(0);
    await page.getByTestId(`outbox-entry-${s4.code}`).getByTestId('outbox-drop').click();
    await expect.poll(() => page.getByTestId(`outbox-entry-${s4.code}`).count()).toBe(0);

    const kept = (await sheetOf(s3.code, cp.id)).attributes[0].current!;
    expect([kept.value, kept.version]).toEqual([5.61, 2]);
    const history = (await technician.get(`/api/observations/${kept.id}/history`)).body.history as RevisionView[];
    expect(history.map((h) => [h.value, h.change])).toEqual([
      [5.6, 'correction'],
      [5.61, null],
    ]);
    expect(history[0].reason).toContain('calibrated meter');
    expect((await sheetOf(s4.code, cp.id)).attributes[0].current?.value).toBe(5.7); // dropped: theirs stays
    expect(problems.filter((p) => !offlineNoise(p))).toEqual([]);
    await context.close();
  });

  it('measures how long the outbox takes to send 50 saves (printed, not asserted)', async () => {
    big = await startStudy('Marigold balm, fifty readings', 9, false);
    const { context, page, problems } = await newTabletPage('block');
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    const cp = week1(big, 1);
    const cells = samplesIn(big, 1).flatMap((s) => big.attributes.map((a) => ({ code: s.code, attrCode: a.code, studyAttributeId: a.id })));
    expect(cells.length).toBeGreaterThanOrEqual(50);
    const saves = cells.slice(0, 50).map((c) => ({
      code: c.code,
      entries: [c.attrCode === 'ph' ? { studyAttributeId: c.studyAttributeId, value: 5.4, method: { method: 'neat' } } : c.attrCode === 'odor' ? { studyAttributeId: c.studyAttributeId, value: 'no_change' } : { studyAttributeId: c.studyAttributeId, value: true }],
    }));
    // The app's own outbox module (the offline kit chunk, the same module instance the page uses).
    const kit = readdirSync(join(process.cwd(), 'dist', 'assets')).find((f) => /^offline-kit-.+\.js$/.test(f))!;
    // A string, so the test runner leaves its import() alone.
    const ms = (await page.evaluate(`(async () => {
      const k = await import('/assets/${kit}');
      const user = (await (await fetch('/api/auth/session')).json()).user;
      const saves = ${JSON.stringify(saves)};
      for (const s of saves) await k.queueSave(user, { sample: { code: s.code }, checkpoint: { id: ${cp.id}, label: 'Week 1' } }, s.entries, false);
      const t0 = performance.now();
      const sent = await k.sendAll(user);
      return { sent, ms: performance.now() - t0 };
    })()`)) as { sent: number; ms: number };
    expect(ms.sent).toBe(50);
    const [n] = await rig.t.db.select({ n: sql<number>`count(*)` }).from(observations).where(and(eq(observations.checkpointId, cp.id), isNotNull(observations.clientId)));
    expect(Number(n.n)).toBe(50);
    console.log(`outbox: 50 saves sent in ${Math.round(ms.ms)} ms (${(ms.ms / 50).toFixed(1)} ms each), headless Chromium against the test app on this machine`);
    expect(problems).toEqual([]);
    await context.close();
  });

  it('a session that ended while offline asks for the password before sending, and keeps the outbox', async () => {
    const { context, page, problems } = await newTabletPage('block');
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    const s = samplesIn(big, 0)[0];
    const cp = week1(big, 0);
    await page.goto(`${rig.baseUrl}/samples/${s.code}/checkpoints/${cp.id}`);
    await page.getByTestId('value-ph').waitFor();
    await kitLoaded(page);
    await context.setOffline(true);
    await fill(page, '5.33');
    await page.getByTestId('save').click();
    await page.getByTestId('attr-ph').getByTestId('on-device').waitFor();
    // Meanwhile the session ends (signed out elsewhere, or idle too long).
    await rig.t.db.execute(sql`DELETE FROM sessions`);
    await context.setOffline(false);
    await page.getByTestId('outbox-password').waitFor({ timeout: 30_000 });
    expect(await page.getByTestId('outbox-count').textContent()).toContain('1 saved on this device');
    await page.screenshot({ path: join(SHOTS, 'offline-session-ended.png') });
    await page.getByTestId('outbox-password-input').fill(DEMO_PASSWORD);
    await page.getByTestId('outbox-password-send').click();
    await expect.poll(() => page.getByTestId('outbox-count').count(), { timeout: 20_000 }).toBe(0);
    technician = await rig.t.signIn(DEMO.technician);
    expect((await sheetOf(s.code, cp.id)).attributes.map((a) => a.current?.value)).toEqual([5.33, 'no_change', true]);
    expect(problems.filter((p) => !offlineNoise(p))).toEqual([]);
    await context.close();
  });
});
