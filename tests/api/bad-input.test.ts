/**
 * Bad input answers a clear 4xx naming the field, never a 500 (the hardening issue): unpaired
 * surrogates and control characters in free text, impossible or far-off dates, chamber-log CSV
 * edge cases, a photo in the wrong multipart field, the role message, the size of the import
 * preview, and another lab's ids on the three routes that answered an empty list.
 * The broad search for such answers is tests/api/fuzz.test.ts.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eq, sql } from 'drizzle-orm';
import { auditLog, chamberLogs, observations, studies } from '../../server/db/schema';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { DATE_RANGE_MESSAGE, NOT_TEXT } from '../../shared/schemas/common';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { hourlyLog, makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';
import { loadTemplates } from '../fuzz/generate';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue, otherCat: Catalogue;
let running: {
  id: number;
  samples: { code: string; studyConditionId: number | null }[];
  checkpoints: { id: number; label: string; kind: string }[];
  attributes: { id: number; code: string }[];
};
let otherStudyId: number;
let logId: number;

const today = () => localDateInZone(new Date(), 'Europe/Berlin');
const auditRows = async () => Number((await t.db.select({ n: sql<number>`count(*)` }).from(auditLog))[0].n);

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  otherCat = await makeCatalogue(t.db, t.labs[1].id, 'Other lab lotion');
  const draft = await formulator.post('/api/studies', planFor(cat, addDays(today(), -7)));
  expect(draft.status, JSON.stringify(draft.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${draft.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  running = started.body.study;
  const other = await otherOwner.post('/api/studies', planFor(otherCat));
  expect(other.status, JSON.stringify(other.body)).toBe(201);
  otherStudyId = other.body.study.id;
  const log = await formulator.agent
    .post(`/api/storage-conditions/${cat.conditions.oven45}/logs`)
    .set('X-Keepwell-Request', '1')
    .attach('file', Buffer.from(hourlyLog('2026-01-05', 48, 45)), 'oven.csv');
  expect(log.status, JSON.stringify(log.body)).toBe(201);
  logId = log.body.log.id;
}, 60_000);
afterAll(async () => t?.close());

// ---------------------------------------------------------------- 1. text that is not text

describe('free text with unpaired surrogates or control characters', () => {
  const bad = 'Calendula x\ud800y';
  const cases: { what: string; send: () => Promise<{ status: number; body: { error?: { fields?: Record<string, string> } } }>; field: string }[] = [
    { what: 'product name', field: 'name', send: () => formulator.post('/api/products', { name: bad, type: 'oil_in_water' }) },
    { what: 'product notes', field: 'notes', send: () => formulator.post('/api/products', { name: 'Cream', type: 'oil_in_water', notes: 'ok \udc00' }) },
    { what: 'ingredient trade name', field: 'tradeName', send: () => formulator.post('/api/ingredients', { tradeName: bad, inciName: 'Aqua', function: 'solvent' }) },
    { what: 'ingredient supplier', field: 'supplier', send: () => formulator.post('/api/ingredients', { tradeName: 'Water 2', inciName: 'Aqua', function: 'solvent', supplier: '\ud83d' }) },
    { what: 'variant name', field: 'name', send: () => formulator.post(`/api/products/${cat.productId}/variants`, { name: bad }) },
    {
      what: 'batch packaging',
      field: 'packaging',
      send: () => formulator.post(`/api/variants/${cat.variantIds[0]}/batches`, { lotCode: 'L-1', madeOn: '2026-01-05', sizeGrams: 500, packaging: bad }),
    },
    { what: 'condition name', field: 'name', send: () => formulator.post('/api/storage-conditions', { kind: 'constant', name: bad, setpointC: 25 }) },
    { what: 'condition location', field: 'location', send: () => formulator.post('/api/storage-conditions', { kind: 'constant', name: '25 °C', location: bad, setpointC: 25 }) },
    { what: 'attribute name', field: 'name', send: () => formulator.post('/api/attributes', { code: 'gloss', name: bad, kind: 'measured' }) },
    {
      what: 'attribute method field label',
      field: 'methodFields.0.label',
      send: () => formulator.post('/api/attributes', { code: 'gloss', name: 'Gloss', kind: 'measured', methodFields: [{ key: 'angle', label: bad }] }),
    },
    { what: 'study plan title', field: 'title', send: () => formulator.post('/api/studies', { ...planFor(cat), title: bad }) },
    { what: 'study plan notes', field: 'notes', send: () => formulator.post('/api/studies', { ...planFor(cat), notes: 'see \udfff' }) },
    { what: 'amendment reason', field: 'reason', send: () => formulator.post(`/api/studies/${running.id}/amendments`, { kind: 'other', reason: bad }) },
    {
      what: 'observation method detail',
      field: 'entries.0.method.spindle',
      send: () => {
        const sample = running.samples.find((s) => s.studyConditionId == null)!;
        const initial = running.checkpoints.find((c) => c.kind === 'initial')!;
        const ph = running.attributes.find((a) => a.code === 'ph')!;
        return technician.put(`/api/samples/${sample.code}/checkpoints/${initial.id}/observations`, {
          entries: [{ studyAttributeId: ph.id, value: 5.4, method: { spindle: bad } }],
        });
      },
    },
    { what: 'missed checkpoint reason', field: 'reason', send: () => technician.post(`/api/checkpoints/${running.checkpoints[0].id}/missed`, { reason: bad }) },
    { what: 'lab time zone', field: 'timeZone', send: () => owner.patch('/api/lab/reminder-settings', { timeZone: 'Europe/Berlin\ud800', reminderHour: 7 }) },
    { what: 'control character in a product name', field: 'name', send: () => formulator.post('/api/products', { name: 'Bell \u0007 cream', type: 'oil_in_water' }) },
  ];

  for (const c of cases) {
    it(`refuses it in the ${c.what} with 400 naming the field, and writes nothing`, async () => {
      const before = await auditRows();
      const res = await c.send();
      expect(res.status, JSON.stringify(res.body)).toBe(400);
      expect(res.body.error?.fields?.[c.field]).toBe(NOT_TEXT);
      expect(await auditRows()).toBe(before);
    });
  }

  it('keeps tabs, line breaks and emoji (whole surrogate pairs)', async () => {
    const res = await formulator.post('/api/products', { name: 'Calendula 🌼 cream', type: 'oil_in_water', notes: 'Line one\n\tLine two' });
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.product.notes).toBe('Line one\n\tLine two');
  });

  /**
   * Every string field of every request schema in shared/schemas refuses a lone surrogate: the
   * schemas' own example values (tests/fuzz/generate.ts), one string at a time. Password entry
   * fields are compared with a stored hash, never stored or shown, so they are left as they are.
   */
  it('every string field of every shared schema refuses an unpaired surrogate', async () => {
    const templates = await loadTemplates();
    const passwordEntry = new Set(['auth.signInInput password', 'account.changePasswordInput currentPassword', 'reviews.decisionInput password']);
    const checked: string[] = [];
    const accepted: string[] = [];
    const walk = (v: unknown, path: (string | number)[], visit: (path: (string | number)[]) => void) => {
      if (typeof v === 'string') visit(path);
      else if (Array.isArray(v)) v.forEach((x, i) => walk(x, [...path, i], visit));
      else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) walk(x, [...path, k], visit);
    };
    for (const tpl of templates) {
      walk(tpl.value, [], (path) => {
        const key = `${tpl.name} ${path.join('.')}`;
        if (passwordEntry.has(key)) return;
        const value = structuredClone(tpl.value) as Record<string, unknown>;
        const parent = path.slice(0, -1).reduce<Record<string | number, unknown>>((o, k) => o[k] as Record<string | number, unknown>, value);
        parent[path[path.length - 1]] = `${parent[path[path.length - 1]]}\ud800`;
        checked.push(key);
        const r = tpl.schema.safeParse(value);
        if (r.success || !r.error.issues.some((i) => i.path.join('.') === path.join('.'))) accepted.push(key);
      });
    }
    expect(checked.length).toBeGreaterThan(60);
    expect(accepted).toEqual([]);
  });
});

// ---------------------------------------------------------------- 2. impossible dates

describe('impossible and far-off dates', () => {
  for (const date of ['2026-02-30', '2026-13-01', '0000-00-00', '9999-12-31']) {
    it(`GET /api/audit and /api/audit.csv refuse from or to ${date} with 400 naming the field`, async () => {
      for (const path of ['/api/audit', '/api/audit.csv']) {
        for (const field of ['from', 'to']) {
          const res = await owner.get(`${path}?${field}=${date}`);
          expect(res.status, `${path} ${field}`).toBe(400);
          expect(res.body.error.fields[field]).toMatch(/Not a real date|between 1900-01-01 and 2199-12-31/);
        }
      }
    });
  }

  it('refuses them in every other date a request carries', async () => {
    const cases: [string, () => Promise<{ status: number; body: { error: { fields: Record<string, string> } } }>, string][] = [
      ['study start', () => formulator.post('/api/studies/preview', { ...planFor(cat), startDate: '2026-02-30' }), 'startDate'],
      ['study start after 2199', () => formulator.post('/api/studies', { ...planFor(cat), startDate: '2200-01-01' }), 'startDate'],
      ['batch made date', () => formulator.post(`/api/variants/${cat.variantIds[0]}/batches`, { lotCode: 'L-2', madeOn: '0000-00-00', sizeGrams: 500, packaging: 'Jar' }), 'madeOn'],
      ['Bench day', () => technician.get('/api/bench?today=2026-13-01'), 'today'],
      ['condition end', () => formulator.post(`/api/studies/${running.id}/amendments`, { kind: 'end_condition', studyConditionId: 1, endedOn: '9999-12-31', reason: 'oven broke' }), 'endedOn'],
      ['chamber-log period', () => technician.get(`/api/chamber-logs/${logId}/summary?from=10000-01-01T00:00`), 'from'],
      ['chamber-log period before 1900', () => technician.get(`/api/chamber-logs/${logId}/series?to=0001-01-01`), 'to'],
    ];
    for (const [what, send, field] of cases) {
      const res = await send();
      expect(res.status, `${what}: ${JSON.stringify(res.body)}`).toBe(400);
      expect(res.body.error.fields[field], what).toBeTruthy();
    }
    expect((await formulator.post('/api/studies', { ...planFor(cat), startDate: '2200-01-01' })).body.error.fields.startDate).toBe(DATE_RANGE_MESSAGE);
  });

  it('marks an impossible time read in an import file as that line\'s problem', async () => {
    const code = running.samples.find((s) => s.studyConditionId != null)!.code;
    const csv = ['sample,attribute,value,time read', `${code},ph,5.4,2026-02-30 09:30`, `${code},ph,5.4,9999-12-31`, `${code},ph,5.4,${today()} 25:00`].join('\n');
    const res = await formulator.agent.post(`/api/studies/${running.id}/import/preview`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(csv), 'r.csv');
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.errors.map((e: { message: string }) => e.message)).toEqual([
      'Line 2: time read "2026-02-30 09:30" is not a date and time (use YYYY-MM-DD HH:mm)',
      'Line 3: time read "9999-12-31" is not a date and time (use YYYY-MM-DD HH:mm)',
      `Line 4: time read "${today()} 25:00" is not a date and time (use YYYY-MM-DD HH:mm)`,
    ]);
  });
});

// ---------------------------------------------------------------- 3. a start far in the future

describe('a study starting at the end of the accepted range', () => {
  it('previews, saves and starts with checkpoints up to 100 years later', async () => {
    const plan = planFor(cat, '2199-12-31');
    plan.conditions[1].offsets = [{ unit: 'month', n: 36 }, { unit: 'month', n: 1200 }];
    const preview = await formulator.post('/api/studies/preview', plan);
    expect(preview.status, JSON.stringify(preview.body)).toBe(200);
    expect(preview.body.preview.perCondition[1].checkpoints.at(-1).dueDate).toBe('2299-12-31');
    const saved = await formulator.post('/api/studies', plan);
    expect(saved.status, JSON.stringify(saved.body)).toBe(201);
    const started = await formulator.post(`/api/studies/${saved.body.study.id}/start`);
    expect(started.status, JSON.stringify(started.body)).toBe(200);
    expect(started.body.study.checkpoints.map((c: { dueDate: string }) => c.dueDate)).toContain('2299-12-31');
    expect((await technician.get(`/api/studies/${saved.body.study.id}`)).status).toBe(200);
    expect((await technician.get('/api/bench?today=2199-12-31&days=31')).status).toBe(200);
  });

  it('previews, saves and starts on the first accepted day, 1900-01-01', async () => {
    const plan = planFor(cat, '1900-01-01');
    expect((await formulator.post('/api/studies/preview', plan)).status).toBe(200);
    const saved = await formulator.post('/api/studies', plan);
    expect(saved.status, JSON.stringify(saved.body)).toBe(201);
    const started = await formulator.post(`/api/studies/${saved.body.study.id}/start`);
    expect(started.status, JSON.stringify(started.body)).toBe(200);
    expect((await technician.get('/api/bench?today=1900-01-01')).status).toBe(200);
    expect((await formulator.get(`/api/studies/${saved.body.study.id}/analysis`)).status).toBe(200);
  });
});

// ---------------------------------------------------------------- 4. chamber-log CSV

describe('chamber-log CSV edge cases', () => {
  const send = (csv: string) =>
    formulator.agent.post(`/api/storage-conditions/${cat.conditions.room}/logs`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(csv), 'log.csv');
  const stored = async () => Number((await t.db.select({ n: sql<number>`count(*)` }).from(chamberLogs).where(eq(chamberLogs.conditionId, cat.conditions.room)))[0].n);

  it('reads a file whose preamble has quote marks (the preamble is not parsed as CSV)', async () => {
    const res = await send('Logger "EL-USB-2" export\nSerial: 12"34\nTimestamp,Temp (°C)\n2026-03-25T14:00:00Z,25.1\n2026-03-25T14:05:00Z,25.2\n');
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.log.readingCount).toBe(2);
  });

  it('refuses a quote mark in the middle of a reading with 400 naming the line', async () => {
    const before = await stored();
    const res = await send('Timestamp,Temp (°C)\n2026-03-25T14:00:00Z,25.1\n2026-03-25T14:05:00Z,2"5.2\n');
    expect(res.status, JSON.stringify(res.body)).toBe(400);
    expect(res.body.error.fields.file).toMatch(/^line 3: a quote mark/);
    expect(await stored()).toBe(before);
  });

  it('refuses times outside 1900..2199 with 400 naming the line (no year 10000, no 0001 read as 1901)', async () => {
    const before = await stored();
    const cases: [string, string][] = [
      ['Timestamp,Temp (°C)\n2026-03-25T14:00:00Z,25\n9999-12-31 23:30-05:00,25\n', 'line 3'],
      ['Timestamp,Temp (°C)\n0001-01-01 00:00,25\n', 'line 2'],
      ['Date,Time,Temp (°C)\n31/12/1899,10:00,25\n', 'line 2'],
    ];
    for (const [csv, line] of cases) {
      const res = await send(csv);
      expect(res.status, JSON.stringify(res.body)).toBe(400);
      expect(res.body.error.fields.file).toMatch(new RegExp(`^${line}: .* outside the years 1900 to 2199`));
    }
    expect(await stored()).toBe(before);
  });
});

// ---------------------------------------------------------------- 5. the wrong multipart field

describe('uploads in the wrong form field', () => {
  it('a photo in another field answers 400 naming the expected field "photos" (not 413)', async () => {
    const res = await technician.agent
      .post(`/api/samples/${running.samples[0].code}/checkpoints/${running.checkpoints[0].id}/photos`)
      .set('X-Keepwell-Request', '1')
      .attach('photo', Buffer.from([0xff, 0xd8, 0xff, 0xe0]), 'jar.jpg');
    expect(res.status, JSON.stringify(res.body)).toBe(400);
    expect(res.body.error.fields.photos).toBe('Expected the field "photos"');
    expect(res.body.error.message).toMatch(/"photos"/);
  });

  it('seven photos in the right field are still too many (413)', async () => {
    let req = technician.agent.post(`/api/samples/${running.samples[0].code}/checkpoints/${running.checkpoints[0].id}/photos`).set('X-Keepwell-Request', '1');
    for (let i = 0; i < 7; i++) req = req.attach('photos', Buffer.from([0xff, 0xd8, 0xff, 0xe0]), `jar${i}.jpg`);
    expect((await req).status).toBe(413);
  });

  it('an import CSV or a chamber log in another field answers 400 naming "file"', async () => {
    const imp = await formulator.agent.post(`/api/studies/${running.id}/import/preview`).set('X-Keepwell-Request', '1').attach('csv', Buffer.from('a,b\n'), 'x.csv');
    expect(imp.status, JSON.stringify(imp.body)).toBe(400);
    expect(imp.body.error.fields.file).toBe('Expected the field "file"');
    const log = await formulator.agent.post(`/api/storage-conditions/${cat.conditions.room}/logs`).set('X-Keepwell-Request', '1').attach('log', Buffer.from('a,b\n'), 'x.csv');
    expect(log.status, JSON.stringify(log.body)).toBe(400);
    expect(log.body.error.fields.file).toMatch(/field "file"/);
  });
});

// ---------------------------------------------------------------- 6. the role message

describe('the role refusal', () => {
  it('reads "Only an owner may do this" and "Only a formulator or above may do this"', async () => {
    const audit = await technician.get('/api/audit');
    expect(audit.status).toBe(403);
    expect(audit.body.error.message).toBe('Only an owner may do this');
    const product = await technician.post('/api/products', { name: 'X', type: 'oil_in_water' });
    expect(product.status).toBe(403);
    expect(product.body.error.message).toBe('Only a formulator or above may do this');
  });
});

// ---------------------------------------------------------------- 7. the import preview of a big file

describe('the import preview of a 169 000-line file', () => {
  it('answers the first 50 lines, the counts and the first 200 problems, in a small answer', async () => {
    const samples = running.samples.filter((s) => s.studyConditionId != null).map((s) => s.code);
    const day = today();
    const lines = ['sample,attribute,value,time read'];
    // The first line of each sample is ready; repeats are "already recorded"; every 7th value is not a number.
    for (let i = 0; i < 169_000; i++) lines.push(`${samples[i % samples.length]},ph,${i % 7 === 6 ? 'abc' : '5.4'},${day}`);
    const csv = `${lines.join('\n')}\n`;
    expect(csv.length).toBeLessThan(5 * 1024 * 1024);
    const before = Number((await t.db.select({ n: sql<number>`count(*)` }).from(observations).where(eq(observations.studyId, running.id)))[0].n);

    const res = await formulator.agent.post(`/api/studies/${running.id}/import/preview`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(csv), 'big.csv');
    expect(res.status, res.text.slice(0, 300)).toBe(200);
    expect(res.text.length).toBeLessThan(100_000);
    expect(res.body.rows).toHaveLength(50);
    expect(res.body.rows[0]).toMatchObject({ line: 2, error: null });
    expect(res.body.totalRows).toBe(169_000);
    expect(res.body.okRows).toBe(samples.length);
    expect(res.body.errorCount).toBe(169_000 - samples.length);
    expect(res.body.errors).toHaveLength(200);
    expect(res.body.errors[0]).toEqual({ line: 2 + samples.length, message: expect.stringMatching(/already recorded/) });
    expect(res.body.moreErrors).toBe(res.body.errorCount - 200);

    const refused = await formulator.agent.post(`/api/studies/${running.id}/import`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(csv), 'big.csv');
    expect(refused.status).toBe(422);
    expect(refused.text.length).toBeLessThan(100_000);
    expect(Object.keys(refused.body.error.fields)).toHaveLength(200);
    const after = Number((await t.db.select({ n: sql<number>`count(*)` }).from(observations).where(eq(observations.studyId, running.id)))[0].n);
    expect(after).toBe(before);
  }, 60_000);
});

// ---------------------------------------------------------------- 8. another lab's ids

describe("another lab's (or an unknown) id answers 404", () => {
  it('on GET /api/studies/:id/photos', async () => {
    expect((await technician.get(`/api/studies/${running.id}/photos`)).status).toBe(200);
    expect((await technician.get(`/api/studies/${otherStudyId}/photos`)).status).toBe(404);
    expect((await technician.get('/api/studies/99999999/photos')).status).toBe(404);
  });

  it('on GET /api/audit?studyId= and ?userId= (and the CSV)', async () => {
    expect((await owner.get(`/api/audit?studyId=${running.id}`)).status).toBe(200);
    for (const path of ['/api/audit', '/api/audit.csv']) {
      expect((await owner.get(`${path}?studyId=${otherStudyId}`)).status, path).toBe(404);
      expect((await owner.get(`${path}?studyId=99999999`)).status, path).toBe(404);
      expect((await owner.get(`${path}?userId=${t.labs[1].members[DEMO.otherOwner]}`)).status, path).toBe(404);
    }
  });

  it('on GET /api/studies/options?productId=', async () => {
    const own = await formulator.get(`/api/studies/options?productId=${cat.productId}`);
    expect(own.status).toBe(200);
    expect(own.body.batches.length).toBeGreaterThan(0);
    expect((await formulator.get(`/api/studies/options?productId=${otherCat.productId}`)).status).toBe(404);
    expect((await formulator.get('/api/studies/options?productId=99999999')).status).toBe(404);
  });

  it("leaves the other lab's study alone", async () => {
    const [row] = await t.db.select({ status: studies.status }).from(studies).where(eq(studies.id, otherStudyId));
    expect(row.status).toBe('draft');
  });
});
