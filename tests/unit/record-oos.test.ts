// @vitest-environment happy-dom
/**
 * The Record screen's out-of-specification words, which values are their own baseline, and the
 * values shown beside an input (initial test, control read the same day or not). Wording only; the
 * values are invented (pH with 2 decimals).
 */
import { describe, expect, it } from 'vitest';
import { mount } from '@vue/test-utils';
import ReferenceValues from '../../src/components/record/ReferenceValues.vue';
import type { ObservationView, RecordAttribute } from '../../shared/schemas/records';
import type { StudyCheckpoint } from '../../shared/schemas/studies';
import { judgedAgainstItself } from '../../src/components/record/format';
import { mayConfirm, needsBenchStep, oosText } from '../../src/components/record/oos';

const ph = { id: 1, code: 'ph', name: 'pH', kind: 'measured', unit: null, decimals: 2, scale: null, methodFields: null } as unknown as RecordAttribute['attribute'];

function item(value: number, verdict: ObservationView['verdict'], investigation: ObservationView['investigation']): RecordAttribute {
  const current: ObservationView = {
    id: 9,
    value,
    method: null,
    verdict,
    message: '',
    notDoneReason: null,
    recordedBy: 'Priya Nair',
    recordedAt: '2026-03-02T09:00:00.000Z',
    version: 1,
    voided: false,
    investigation,
  };
  return { studyAttributeId: 3, attribute: ph, criterion: { kind: 'change_abs', max: 0.5 }, baseline: null, previous: null, control: null, current };
}

describe('out-of-specification state on the Record screen', () => {
  it('a failing result nobody re-measured or confirmed waits for the bench step', () => {
    const x = item(4.8, 'fail', { id: 1, status: 'open', benchStep: 'unconfirmed', remeasure: null, conclusion: null });
    expect(needsBenchStep(x)).toBe(true);
    expect(mayConfirm(x)).toBe(false);
    expect(oosText(x)).toBe('Out of specification: investigation open');
  });

  it('re-measured: no longer unconfirmed, confirming still offered; then confirmed', () => {
    const re = item(4.8, 'fail', { id: 1, status: 'open', benchStep: 'remeasured', remeasure: { value: 4.85, verdict: 'fail' }, conclusion: null });
    expect(needsBenchStep(re)).toBe(false);
    expect(mayConfirm(re)).toBe(true);
    expect(oosText(re)).toBe('Out of specification: re-measured 4.85; investigation open');
    const conf = item(4.8, 'fail', { id: 1, status: 'open', benchStep: 'confirmed', remeasure: { value: 4.85, verdict: 'fail' }, conclusion: null });
    expect(mayConfirm(conf)).toBe(false);
    expect(oosText(conf)).toBe('Out of specification: re-measured 4.85, confirmed; investigation open');
  });

  it('closed: invalidated with the re-test as the value used, or confirmed', () => {
    const inv = item(5.45, 'pass', { id: 1, status: 'closed', benchStep: 'confirmed', remeasure: { value: 4.85, verdict: 'fail' }, conclusion: 'invalidated' });
    expect(oosText(inv)).toBe('Out of specification: re-measured 4.85, confirmed; closed: invalidated, re-test 5.45 used');
    const conf = item(4.7, 'fail', { id: 2, status: 'closed', benchStep: 'unconfirmed', remeasure: null, conclusion: 'confirmed' });
    expect(needsBenchStep(conf)).toBe(false);
    expect(oosText(conf)).toBe('Out of specification: closed: result confirmed');
  });

  it('no investigation, no words', () => {
    expect(oosText(item(5.4, 'pass', null))).toBe('');
    expect(needsBenchStep(item(5.4, 'pass', null))).toBe(false);
  });
});

describe('values that are their own baseline (as the server judges them)', () => {
  const cp = (kind: StudyCheckpoint['kind'], offset: StudyCheckpoint['offset']) => ({ kind, offset });
  it('the initial test and an old condition\'s own day 0', () => {
    expect(judgedAgainstItself(cp('initial', { unit: 'day', n: 0 }), null)).toBe(true);
    expect(judgedAgainstItself(cp('extra_day0', { unit: 'day', n: 0 }), { label: 'Initial' })).toBe(true);
  });
  it('a pull is judged from the initial test; a centrifuge cycle 0 too', () => {
    expect(judgedAgainstItself(cp('pull', { unit: 'week', n: 4 }), { label: 'Initial' })).toBe(false);
    expect(judgedAgainstItself(cp('pull', { unit: 'cycle', n: 0 }), { label: 'Initial' })).toBe(false);
  });
  it('a day-0 pull of a study recorded before the initial test is its own baseline', () => {
    expect(judgedAgainstItself(cp('pull', { unit: 'day', n: 0 }), { label: 'Day 0' })).toBe(true);
    expect(judgedAgainstItself(cp('pull', { unit: 'day', n: 0 }), null)).toBe(true);
  });
});

describe('values beside an input', () => {
  const odor = { id: 2, code: 'odor', name: 'Odor', kind: 'compared', unit: null, decimals: 0, scale: null, methodFields: null } as unknown as RecordAttribute['attribute'];
  const base = { studyAttributeId: 4, attribute: odor, criterion: { kind: 'worst_compared', level: 'slight' }, previous: null, current: null } as unknown as RecordAttribute;
  const props = (item: Partial<RecordAttribute>, extra: Record<string, unknown> = {}) => ({
    item: { ...base, ...item },
    sampleCode: 'AB12CD',
    atInitial: false,
    selfBaseline: false,
    isControl: false,
    controlReading: null,
    ...extra,
  });

  it('the batch\'s initial value with its sample, and the control read the same day', () => {
    const w = mount(ReferenceValues, {
      props: props({ baseline: { value: 'no_change', label: 'Initial', sampleCode: 'RT0001' }, control: { value: 'slight', label: 'Week 4', sampleCode: 'FR0004', sameDay: true } }),
    });
    expect(w.find('[data-testid="ref-baseline"]').text()).toMatch(/^Initial\s*no change, sample RT0001$/);
    expect(w.find('[data-testid="ref-control"]').text()).toMatch(/^Control, same day · Week 4\s*slight, sample FR0004$/);
  });

  it('a pull without a paired control reading says the control is not from the same day', () => {
    const w = mount(ReferenceValues, { props: props({ baseline: null, control: { value: 'no_change', label: 'Week 2', sampleCode: 'FR0002', sameDay: false } }) });
    expect(w.find('[data-testid="ref-control"]').text()).toContain('Latest control reading (not the same day) · Week 2');
    expect(w.find('[data-testid="ref-baseline"]').text()).toContain('not recorded yet');
  });

  it('the control not read yet today; nothing at the initial test or on the control itself', () => {
    const reading = { checkpointId: 7, label: 'Week 4', dueDate: '2026-03-02', sampleCode: 'FR0004', recorded: false, initial: false };
    expect(mount(ReferenceValues, { props: props({ baseline: null, control: null }, { controlReading: reading }) }).find('[data-testid="ref-control"]').text()).toContain('not read yet');
    expect(mount(ReferenceValues, { props: props({ baseline: null, control: null }, { atInitial: true }) }).find('aside').exists()).toBe(false);
    expect(mount(ReferenceValues, { props: props({ baseline: null, control: null }, { isControl: true }) }).find('[data-testid="ref-control"]').exists()).toBe(false);
  });
});
