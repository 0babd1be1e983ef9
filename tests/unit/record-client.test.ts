// @vitest-environment happy-dom
/**
 * The Record screen's client pieces: typed values to API values, the live pass/fail with the shared
 * evaluation, method details, the audit trail in words, the draft kept on the device, the photo
 * strip's ordering and side-by-side choice, and the import preview's "Import all" gate.
 * Criteria used here are common practice, no published source (DESIGN.md): pH within ±0.5 of day 0,
 * viscosity within ±20 %, separation at worst grade 1.
 */
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { effectScope, nextTick } from 'vue';
import { flushPromises, mount } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import type { Attribute, PlanBatch, StudyCheckpoint, StudySample } from '../../shared/schemas/studies';
import type { ImportPreview, ImportPreviewRow, PhotoView } from '../../shared/schemas/records';
import { SEPARATION_SCALE } from '../../shared/attributes-starter';
import { actionLabel, actionTone, auditTime, rawRecord } from '../../src/components/record/auditText';
import {
  draftValue,
  entryHasContent,
  liveEvaluation,
  methodForApi,
  parseTyped,
  typedProblem,
  valueText,
} from '../../src/components/record/format';
import { draftKey, useDraft } from '../../src/composables/useDraft';
import ImportReadings from '../../src/components/record/ImportReadings.vue';
import PhotoStrip from '../../src/components/record/PhotoStrip.vue';
import { useSessionStore } from '../../src/stores/session';

const attribute = (over: Partial<Attribute>): Attribute => ({
  id: 1,
  code: 'ph',
  name: 'pH',
  kind: 'measured',
  unit: null,
  decimals: 2,
  scale: null,
  methodFields: null,
  physicalMin: 0,
  physicalMax: 14,
  defaultCriterion: null,
  description: null,
  builtIn: true,
  active: true,
  ...over,
});
const ph = attribute({});
const viscosity = attribute({
  code: 'viscosity',
  name: 'Viscosity',
  unit: 'mPa·s',
  decimals: 0,
  physicalMax: null,
  methodFields: [
    { key: 'spindle', label: 'Spindle' },
    { key: 'speed', label: 'Speed', unit: 'rpm' },
    { key: 'temperature', label: 'Temperature', unit: '°C' },
  ],
});
const separation = attribute({ code: 'separation', name: 'Separation', kind: 'graded', decimals: 0, scale: SEPARATION_SCALE, physicalMin: null, physicalMax: null });

describe('typed values', () => {
  it('reads a decimal comma, a true minus sign and refuses words', () => {
    expect(parseTyped('5,42')).toBe(5.42);
    expect(parseTyped(' −1.5 ')).toBe(-1.5);
    expect(parseTyped('')).toBeNull();
    expect(parseTyped('abc')).toBeNaN();
    expect(parseTyped('5.4.2')).toBeNaN();
    expect(draftValue(ph, '5,42')).toBe(5.42);
    expect(draftValue(separation, 1)).toBe(1);
  });

  it('names impossible values before sending, with the shared physical limits', () => {
    expect(typedProblem(ph, '15')).toBe('pH must be between 0 and 14 (got 15)');
    expect(typedProblem(viscosity, '-3')).toBe('Viscosity cannot be negative (got -3)');
    expect(typedProblem(ph, 'abc')).toMatch(/Type a number/);
    expect(typedProblem(ph, '5.4')).toBeNull();
    expect(typedProblem(ph, '')).toBeNull();
  });

  it('a draft entry counts only when a value is typed or it is marked not done (method defaults do not count)', () => {
    expect(entryHasContent({ value: null, method: { spindle: 'RV-5' }, notDone: false, notDoneReason: '' })).toBe(false);
    expect(entryHasContent({ value: '5.4', method: {}, notDone: false, notDoneReason: '' })).toBe(true);
    expect(entryHasContent({ value: null, method: {}, notDone: true, notDoneReason: '' })).toBe(true);
  });
});

describe('pass/fail as typed (the shared evaluate, same sentence as the server)', () => {
  it('judges a change from day 0, and on day 0 the value is its own baseline', () => {
    const crit = { kind: 'change_abs', max: 0.5 } as const;
    expect(liveEvaluation(ph, crit, 5.9, 5.3, false)).toEqual({ verdict: 'fail', message: 'pH 5.9 is 0.6 from day-0 5.3; allowed ±0.5' });
    expect(liveEvaluation(ph, crit, 5.8, 5.3, false)?.verdict).toBe('pass');
    expect(liveEvaluation(ph, crit, 5.8, null, false)?.verdict).toBe('needs_baseline');
    expect(liveEvaluation(ph, crit, 5.8, null, true)?.verdict).toBe('pass');
    expect(liveEvaluation(ph, crit, null, 5.3, false)).toBeNull();
  });

  it('names grades by their label, and a value that does not fit gives no verdict rather than an error', () => {
    const ev = liveEvaluation(separation, { kind: 'worst_grade', grade: 1 }, 2, null, false);
    expect(ev?.message).toBe('Separation grade 2 (Oil droplets on surface) is worse than the worst allowed 1 (Faint oil sheen)');
    expect(liveEvaluation(ph, { kind: 'change_abs', max: 0.5 }, 'slight', 5.3, false)).toBeNull();
  });

  it('writes values in the attribute’s terms', () => {
    expect(valueText(viscosity, 12000)).toBe('12000 mPa·s');
    // pH keeps its 2 decimals: 5.5 reads "5.50"; more digits typed are never rounded away.
    expect(valueText(ph, 5.5)).toBe('5.50');
    expect(valueText(ph, 5.523)).toBe('5.523');
    expect(valueText(ph, 6)).toBe('6.00');
    expect(valueText(attribute({ decimals: 1, unit: '°C' }), -2)).toBe('−2.0 °C');
    expect(valueText(separation, 1)).toBe('1 (Faint oil sheen)');
    expect(valueText(attribute({ kind: 'compared' }), 'no_change')).toBe('no change');
    expect(valueText(attribute({ kind: 'pass_fail' }), false)).toBe('Fail');
  });
});

describe('method details', () => {
  it('sends numbers where the field has a unit, text otherwise, and leaves empty ones out', () => {
    expect(methodForApi(viscosity.methodFields, { spindle: 'RV-5', speed: '10', temperature: '25,5' })).toEqual({ spindle: 'RV-5', speed: 10, temperature: 25.5 });
    expect(methodForApi(viscosity.methodFields, { spindle: '', speed: '' })).toBeUndefined();
    expect(methodForApi(null, { a: 'x' })).toBeUndefined();
  });
});

describe('audit trail helpers', () => {
  const correction = {
    id: 7,
    at: '2026-12-01T09:30:05.000Z',
    action: 'update',
    entity: 'observation',
    entityId: '12',
    oldValue: { value: 5.9, verdict: 'fail', version: 1, voided: false },
    newValue: { value: 5.5, verdict: 'pass', version: 2, sample: 'K7M2QX', checkpoint: 'Week 1', attribute: 'ph' },
    reason: 'Read the wrong meter display',
  };

  it('keeps the raw record as stored, and names actions from the one vocabulary', () => {
    expect(JSON.parse(rawRecord(correction))).toEqual(correction);
    expect(rawRecord(correction)).toContain('\n  "oldValue": {');
    expect(actionLabel('sign_failed')).toBe('Signature refused');
    expect(actionLabel('submit')).toBe('Submitted for review');
    expect(actionLabel('remeasure')).toBe('Re-measured');
    expect(actionTone('lockout')).toBe('alert');
    expect(actionTone('create')).toBe('plain');
  });

  it('shows times in the lab’s zone with seconds', () => {
    // 09:30:05 UTC is 10:30:05 in Berlin in winter (CET, UTC+1).
    expect(auditTime('2026-12-01T09:30:05.000Z', 'Europe/Berlin', 'DD/MM/YYYY')).toBe('01/12/2026 10:30:05');
  });
});

describe('draft kept on this device', () => {
  beforeEach(() => localStorage.clear());

  it('stores what is typed under lab, person, sample and checkpoint, restores it, and forgets it when told', async () => {
    const key = draftKey(1, 7, 'k7m2qx', 42);
    expect(key).toBe('keepwell:draft:v1:1:7:K7M2QX:42');
    const make = () =>
      useDraft<{ entries: Record<string, { value: string | null }> }>({
        key: () => key,
        empty: () => ({ entries: {} }),
        isEmpty: (d) => !Object.values(d.entries).some((e) => e.value),
      });
    const scope = effectScope();
    const d = scope.run(make)!;
    d.data.value.entries['3'] = { value: null };
    await nextTick();
    expect(localStorage.getItem(key)).toBeNull(); // nothing typed yet
    d.data.value.entries['3'] = { value: '5,4' };
    await nextTick();
    expect(JSON.parse(localStorage.getItem(key)!).data.entries['3'].value).toBe('5,4');
    d.markPending();
    scope.stop();

    const again = effectScope();
    const d2 = again.run(make)!;
    expect(d2.restored.value).toBe(true);
    expect(d2.pending.value).toBe(true);
    expect(d2.data.value.entries['3'].value).toBe('5,4');
    d2.clear();
    expect(localStorage.getItem(key)).toBeNull();
    again.stop();
  });
});

// Mounting Element Plus in happy-dom takes seconds on a busy machine.
const MOUNT_TIMEOUT = 30_000;

describe('photo strip', () => {
  const samples: StudySample[] = [
    { id: 1, code: 'AAAAAA', studyConditionId: 10, batchId: 100, replicate: 1, labelOrder: 0 },
    { id: 2, code: 'BBBBBB', studyConditionId: 10, batchId: 200, replicate: 1, labelOrder: 1 },
  ];
  const batches = [
    { id: 100, lotCode: 'L-A', madeOn: '2026-11-01', packaging: 'jar', variant: { id: 1, code: 'A', name: '4 % emulsifier' } },
    { id: 200, lotCode: 'L-B', madeOn: '2026-11-01', packaging: 'jar', variant: { id: 2, code: 'B', name: '5 % emulsifier + xanthan' } },
  ] as PlanBatch[];
  const cp = (id: number, label: string, dueDate: string) => ({ id, studyConditionId: 10, label, dueDate }) as StudyCheckpoint;
  const checkpoints = [cp(1, 'Day 0', '2026-11-01'), cp(2, 'Week 1', '2026-11-08'), cp(3, 'Week 2', '2026-11-15'), cp(4, 'Week 4', '2026-11-29')];
  const photo = (id: number, sampleCode: string, checkpointLabel: string): PhotoView => ({
    id,
    url: `/api/photos/${id}`,
    thumbUrl: `/api/photos/${id}/thumb`,
    originalUrl: `/api/photos/${id}/original`,
    width: 640,
    height: 480,
    caption: null,
    uploadedBy: 'Priya Nair',
    uploadedAt: `2026-11-${String(id).padStart(2, '0')}T09:00:00.000Z`,
    sampleCode,
    checkpointLabel,
  });
  // Uploaded out of order on purpose: the strip follows the checkpoints, not the upload time.
  const photos = [photo(9, 'AAAAAA', 'Week 2'), photo(1, 'AAAAAA', 'Day 0'), photo(2, 'BBBBBB', 'Day 0'), photo(10, 'BBBBBB', 'Week 2')];

  beforeEach(() => {
    setActivePinia(createPinia());
    useSessionStore().user = { id: 1, name: 'Priya Nair', email: 'p@x', role: 'technician', lab: { id: 1, name: 'Lab', timeZone: 'Europe/Berlin', dateFormat: 'DD/MM/YYYY' } };
  });

  it('shows one sample over time in checkpoint order, with the missing checkpoint marked', async () => {
    const w = mount(PhotoStrip, { props: { photos, samples, batches, checkpoints }, attachTo: document.body });
    await flushPromises();
    const frames = w.findAll('.frame').map((f) => f.find('.frame-label').text());
    expect(frames).toEqual(['Day 0', 'Week 1', 'Week 2']);
    expect(w.findAll('.frame')[1].text()).toContain('No photo');
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('puts two variants side by side at the latest checkpoint where both have a photo', async () => {
    const w = mount(PhotoStrip, { props: { photos, samples, batches, checkpoints }, attachTo: document.body });
    await flushPromises();
    await w.find('[data-value="side"]').trigger('click');
    await flushPromises();
    const left = w.find('[data-testid="strip-column-0"]');
    const right = w.find('[data-testid="strip-column-1"]');
    expect(left.text()).toContain('Variant A');
    expect(left.text()).toContain('Week 2');
    expect(left.findAll('img').map((i) => i.attributes('src'))).toEqual(['/api/photos/9/thumb']);
    expect(right.text()).toContain('Variant B');
    expect(right.findAll('img').map((i) => i.attributes('src'))).toEqual(['/api/photos/10/thumb']);
    w.unmount();
  }, MOUNT_TIMEOUT);
});

describe('import preview', () => {
  const row = (line: number, error: string | null): ImportPreviewRow => ({
    line,
    sampleCode: 'AAAAAA',
    attributeCode: 'ph',
    value: error ? 'abc' : '5.4',
    readAt: '2026-12-01 09:30',
    checkpointLabel: 'Week 1',
    evaluation: error ? null : { verdict: 'pass', message: 'pH 5.4 is 0.1 from day-0 5.3; allowed ±0.5' },
    error,
  });
  let answers: ({ rows: ImportPreviewRow[]; errorCount: number } & Partial<ImportPreview>)[] = [];

  beforeEach(() => {
    setActivePinia(createPinia());
    useSessionStore().user = { id: 2, name: 'Theo Okafor', email: 't@x', role: 'formulator', lab: { id: 1, name: 'Lab', timeZone: 'UTC', dateFormat: 'YYYY-MM-DD' } };
    // The server's preview answers (its own behaviour is covered by tests/api/records.test.ts).
    vi.stubGlobal('fetch', vi.fn(async () => new Response(JSON.stringify(answers.shift()), { status: 200, headers: { 'Content-Type': 'application/json' } })));
  });
  afterEach(() => vi.unstubAllGlobals());

  async function choose(w: ReturnType<typeof mount>) {
    const input = w.find('[data-testid="import-file"]');
    Object.defineProperty(input.element, 'files', { value: [new File(['sample,attribute,value,time read\n'], 'readings.csv', { type: 'text/csv' })], configurable: true });
    await input.trigger('change');
    await flushPromises();
  }

  it('marks lines with a problem by icon and text, and keeps "Import all" disabled until none is left', async () => {
    answers = [
      { rows: [row(2, null), row(3, 'Line 3: "abc" is not a valid pH value')], errorCount: 1 },
      { rows: [row(2, null), row(3, null)], errorCount: 0 },
    ];
    const w = mount(ImportReadings, { props: { studyId: 5 }, attachTo: document.body });
    await choose(w);
    const bad = w.find('tr.has-error');
    expect(bad.attributes('data-line')).toBe('3');
    expect(bad.text()).toContain('"abc" is not a valid pH value');
    expect(bad.find('svg').exists()).toBe(true);
    expect(w.find('[data-testid="import-all"]').attributes('disabled')).toBeDefined();
    expect(w.find('[data-testid="import-summary"]').text()).toContain('1 with a problem');

    await choose(w);
    expect(w.find('tr.has-error').exists()).toBe(false);
    expect(w.find('[data-testid="import-all"]').attributes('disabled')).toBeUndefined();
    expect(w.find('[data-testid="import-summary"]').text()).toContain('all ready');
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('shows the counts of a file longer than the preview, and the problems below the lines shown', async () => {
    // The server answers the first 50 lines, the counts and the first 200 problems (tests/api/bad-input.test.ts).
    const shown = Array.from({ length: 50 }, (_, i) => row(i + 2, null));
    answers = [
      {
        rows: shown,
        totalRows: 169_000,
        okRows: 168_700,
        errorCount: 300,
        errors: [
          { line: 900, message: 'Line 900: "abc" is not a valid pH value' },
          { line: 901, message: 'Line 901: no sample ZZZZZZ in this study' },
        ],
        moreErrors: 298,
      },
    ];
    const w = mount(ImportReadings, { props: { studyId: 5 }, attachTo: document.body });
    await choose(w);
    const summary = w.find('[data-testid="import-summary"]').text();
    expect(summary).toContain('169,000 lines');
    expect(w.find('[data-testid="import-ok"]').text()).toContain('168,700 ready');
    expect(w.find('[data-testid="import-bad"]').text()).toContain('300 with a problem');
    expect(w.find('[data-testid="import-shown"]').text()).toContain('first 50 of 169,000 lines');
    expect(w.findAll('[data-testid="import-row"]')).toHaveLength(50);
    const more = w.find('[data-testid="import-more-problems"]').text();
    expect(more).toContain('Line 900: "abc" is not a valid pH value');
    expect(more).toContain('298 more lines with a problem');
    expect(w.find('[data-testid="import-all"]').attributes('disabled')).toBeDefined();
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('shows nothing to a technician', () => {
    useSessionStore().user = { ...useSessionStore().user!, role: 'technician' };
    const w = mount(ImportReadings, { props: { studyId: 5 } });
    expect(w.find('[data-testid="import-readings"]').exists()).toBe(false);
    w.unmount();
  }, MOUNT_TIMEOUT);
});
