/**
 * The demo lab's photos with a reference card (server/demo/colour-photos.ts, invented): at 45 °C the
 * measured ΔE00 against the initial photo grows pull by pull, the same-day control's stays small.
 */
import { execFileSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { and, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { checkpoints, photoRegions, photos, studyConditions } from '../../server/db/schema';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let technician: Client;

beforeAll(async () => {
  t = await createTestApp({}, { demo: 'full' });
  technician = await t.signIn(DEMO.technician);
}, 120_000);
afterAll(async () => t?.close());

describe('demo: colour measured from photos', () => {
  it('the analysis charts photo ΔE00 per condition and the report carries the chart with the method', async () => {
    const [row] = await t.db.select({ studyId: photos.studyId }).from(photoRegions).innerJoin(photos, eq(photos.id, photoRegions.photoId)).limit(1);
    const formulator = await t.signIn(DEMO.formulator);
    const analysis = (await formulator.get(`/api/studies/${row.studyId}/analysis`)).body.analysis;
    const photoSeries = analysis.deltaE.filter((d: { source?: string }) => d.source === 'photo');
    expect(photoSeries.length).toBeGreaterThanOrEqual(2);
    const res = await formulator.agent.get(`/api/studies/${row.studyId}/report.pdf`).buffer(true).parse((r, cb) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    expect(res.status).toBe(200);
    const dir = join(process.cwd(), 'test-results', 'report');
    mkdirSync(dir, { recursive: true });
    const file = join(dir, 'photo-colour-report.pdf');
    writeFileSync(file, res.body as Buffer);
    const text = execFileSync('pdftotext', ['-layout', file, '-']).toString();
    expect(text).toContain('Colour from photos');
    expect(text).toContain('IEC 61966-2-1');
    expect(text).toContain('CIEDE2000');
  });

  it('shows a measured drift at 45 °C and little change in the control', async () => {
    const rows = await t.db
      .select({ photoId: photos.id, due: checkpoints.dueDate, kind: checkpoints.kind, role: studyConditions.role })
      .from(photoRegions)
      .innerJoin(photos, eq(photos.id, photoRegions.photoId))
      .innerJoin(checkpoints, eq(checkpoints.id, photos.checkpointId))
      .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
      .where(and(eq(photoRegions.labId, t.labs[0].id)))
      .orderBy(checkpoints.dueDate);
    const hot = rows.filter((r) => r.role === 'accelerated');
    expect(rows.some((r) => r.kind === 'initial')).toBe(true);
    expect(hot.length).toBeGreaterThanOrEqual(3);
    const de = async (id: number) => (await technician.get(`/api/photos/${id}/colour`)).body;
    const hotValues = [];
    for (const r of hot) hotValues.push((await de(r.photoId)).vsInitial.deltaE as number);
    // Growing with time, clearly visible by the last pull (about 2 to 3 is clearly visible: common practice, no published source).
    expect(hotValues.at(-1)!).toBeGreaterThan(3);
    expect(hotValues.at(-1)!).toBeGreaterThan(hotValues[0]);
    // The latest 45 °C pull with a same-day control photo: clearly apart from it.
    const paired = [];
    for (const r of hot) paired.push(await de(r.photoId));
    const withControl = paired.filter((v) => v.vsControl.deltaE !== null);
    expect(withControl.length).toBeGreaterThan(0);
    expect(withControl.at(-1).vsControl.deltaE).toBeGreaterThan(2);
    // The control barely moves (invented drift of 0.08 b* a week): small, within the photo method's noise.
    for (const r of rows.filter((x) => x.role === 'control')) expect((await de(r.photoId)).vsInitial.deltaE).toBeLessThan(1.5);
    // Each demo photo with a card answers.
    for (const r of rows) expect((await technician.get(`/api/photos/${r.photoId}`)).status).toBe(200);
  });
});
