import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildDigest, type DigestMember } from '../../jobs/digests';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';

let t: TestApp;
const ctx = { link: (p: string) => `http://127.0.0.1:3000${p}` };
const member = (email: string, role: DigestMember['role']): DigestMember => ({
  id: t.labs[0].members[email],
  name: 'Priya Nair',
  email,
  role,
  labId: t.labs[0].id,
  lab: { id: t.labs[0].id, name: 'Larkspur Skin Studio', timeZone: 'Europe/Berlin', reminderHour: 7 },
});

beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => t?.close());

describe('morning digest content', () => {
  it('is null for everyone when nothing is due', async () => {
    const today = localDateInZone(new Date(), 'Europe/Berlin');
    expect(await buildDigest(t.db, member(DEMO.technician, 'technician'), today, ctx)).toBeNull();
    expect(await buildDigest(t.db, member(DEMO.formulator, 'formulator'), today, ctx)).toBeNull();
    expect(await buildDigest(t.db, member(DEMO.owner, 'owner'), today, ctx)).toBeNull();
  });

  it("lists a technician's overdue, due and coming checks by location, one line per sample with its link", async () => {
    const formulator = await t.signIn(DEMO.formulator);
    const cat = await makeCatalogue(t.db, t.labs[0].id);
    const today = localDateInZone(new Date(), 'Europe/Berlin');
    const plan = { ...planFor(cat, addDays(today, -8)), responsibleId: t.labs[0].members[DEMO.technician] };
    plan.conditions[0].offsets = [{ unit: 'day', n: 8 }, { unit: 'day', n: 10 }, { unit: 'day', n: 20 }];
    plan.conditions[1].offsets = [{ unit: 'day', n: 20 }];
    const id = (await formulator.post('/api/studies', plan)).body.study.id;
    const study = (await formulator.post(`/api/studies/${id}/start`)).body.study;
    const mail = await buildDigest(t.db, member(DEMO.technician, 'technician'), today, ctx);
    expect(mail).not.toBeNull();
    const fridgeSamples = study.samples.filter((s: { studyConditionId: number }) => s.studyConditionId === study.conditions[0].id);
    expect(mail!.text).toContain('fridge 1');
    const text = mail!.text!.replace(/\s+/g, ' ');
    expect(mail!.text).toContain('Initial test (before storage)'); // the retained samples' initial test, window closed
    expect(text).toContain('overdue');
    expect(text).toContain('due today'); // day 8
    expect(text).toContain('coming up'); // day 10 is within the next two days
    expect(mail!.text).not.toContain('Day 20');
    expect(mail!.html).toContain(`http://127.0.0.1:3000/samples/${fridgeSamples[0].code}`);
    expect(mail!.html).not.toMatch(/<img/i); // no tracking pixels or remote images
    expect(mail!.text).toContain('Larkspur Skin Studio');
    // The other technician's lab, and a member who is not responsible, get nothing.
    expect(await buildDigest(t.db, member(DEMO.owner, 'technician'), today, ctx)).toBeNull();
  });
});
