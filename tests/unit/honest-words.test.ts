// @vitest-environment happy-dom
/**
 * Say only what is true: the gate summary over the stress tests and the control, a report
 * schedule's state once a study has ended (and the study page's checkpoint grid in the same words),
 * and a best-before date already past flagged on the analysis page. Our own wording rules; no
 * outside source involved.
 */
import { describe, expect, it } from 'vitest';
import { mount, RouterLinkStub } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { labelDating } from '../../shared/compute/label';
import { gateSummary, suggestShelfLife, SUGGEST_CAUTION, type SuggestReason, type SuggestResult } from '../../shared/compute/suggest';
import type { StudyDetail } from '../../shared/schemas/studies';
import { notPulled, scheduleStateText } from '../../shared/schedule-words';
import SuggestionCard from '../../src/components/analysis/SuggestionCard.vue';
import CheckpointGrid from '../../src/components/study/CheckpointGrid.vue';

const gate = (condition: string, dataPoints: number, gateOf: 'stress' | 'control' = 'stress', failed = false): SuggestReason => ({
  attribute: failed ? 'Separation' : 'all attributes',
  condition,
  method: 'gate',
  dataPoints,
  figureMonths: null,
  rule: '',
  message: '',
  gateOf,
});

describe('gateSummary', () => {
  it('says "no results yet" for a condition without any, "no failures" only for one with results', () => {
    expect(gateSummary([gate('Freeze-thaw', 0), gate('Centrifuge', 0)], 'stress')).toBe('Stress tests: no results yet (Freeze-thaw, Centrifuge).');
    expect(gateSummary([gate('Freeze-thaw', 12), gate('Centrifuge', 0)], 'stress')).toBe('Stress tests: no failures (Freeze-thaw); no results yet (Centrifuge).');
    expect(gateSummary([gate('4 °C', 0, 'control')], 'control')).toBe('Control: no results yet (4 °C).');
    expect(gateSummary([gate('4 °C', 9, 'control')], 'control')).toBe('Control: no failures (4 °C).');
  });

  it('says nothing when there is no such condition or one failed (the gates list says so)', () => {
    expect(gateSummary([gate('4 °C', 9, 'control')], 'stress')).toBeNull();
    expect(gateSummary([gate('Freeze-thaw', 12, 'stress', true), gate('Centrifuge', 3)], 'stress')).toBeNull();
  });
});

describe('scheduleStateText', () => {
  it('keeps the calendar words while the study runs', () => {
    expect(scheduleStateText('overdue', 'running')).toBe('Overdue');
    expect(scheduleStateText('upcoming', 'running')).toBe('Upcoming');
    expect(scheduleStateText('done', 'decided')).toBe('Done');
    expect(scheduleStateText('missed', 'decided')).toBe('Missed');
  });

  it('says a pull never taken was not pulled once the study ended or went to review', () => {
    for (const s of ['upcoming', 'due', 'overdue'] as const) {
      expect(scheduleStateText(s, 'decided')).toBe('Not pulled, study ended');
      expect(scheduleStateText(s, 'cancelled')).toBe('Not pulled, study ended');
      expect(scheduleStateText(s, 'in_review')).toBe('Not pulled, study in review');
      expect(notPulled(s, 'decided')).toBe(true);
    }
    expect(notPulled('cancelled', 'cancelled')).toBe(false);
  });
});

describe('stress test gates count their own pulls only', () => {
  it('a freeze-thaw condition with only the initial test says no results yet, then no failures after a pull', () => {
    const obs = (initial: boolean, months: number) => ({ months, passed: true, initial });
    const run = (observations: ReturnType<typeof obs>[]) =>
      suggestShelfLife({ conditions: [{ name: 'Freeze-thaw', kind: 'cycling', role: 'stress', setpointC: null, attributes: [{ name: 'Separation', kind: 'graded', observations }] }] });
    expect(gateSummary(run([obs(true, 0)]).reasons, 'stress')).toBe('Stress tests: no results yet (Freeze-thaw).');
    expect(gateSummary(run([obs(true, 0), obs(false, 0.2)]).reasons, 'stress')).toBe('Stress tests: no failures (Freeze-thaw).');
    // A failing initial reading is not a stress-test failure.
    expect(run([{ months: 0, passed: false, initial: true }]).gates).toEqual([]);
  });
});

describe('the study page checkpoint grid', () => {
  // One 45 °C condition, one sample: the initial test done, week 1 overdue, week 4 upcoming.
  const cp = (id: number, kind: string, label: string, dueDate: string, state: string) => ({
    id, studyConditionId: kind === 'initial' ? null : 21, kind, label, dueDate, windowStart: dueDate, windowEnd: dueDate, state, recorded: 0, expected: 3, controlCheckpointId: null,
  });
  const study = (status: string) =>
    ({
      id: 5,
      status,
      today: '2026-09-20',
      samplesPerCell: 1,
      batches: [{ id: 11, lotCode: 'L-A', variant: { id: 101, code: 'A', name: 'Variant A' } }],
      conditions: [{ id: 21, name: '45 °C', role: 'accelerated', setpointC: 45, location: 'Oven 1', endedOn: null, pairControl: false }],
      checkpoints: [cp(30, 'initial', 'Initial', '2026-09-01', 'done'), cp(31, 'pull', 'Week 1', '2026-09-08', 'overdue'), cp(32, 'pull', 'Week 4', '2026-09-29', 'upcoming')],
      samples: [{ id: 1, code: 'AB12CD', batchId: 11, studyConditionId: 21, labelOrder: 1, replicate: 1 }],
    }) as unknown as StudyDetail;
  const cells = (status: string) => {
    const w = mount(CheckpointGrid, { props: { study: study(status), dateFormat: 'YYYY-MM-DD' }, global: { stubs: { RouterLink: RouterLinkStub } } });
    const texts = w.findAll('[data-testid="grid-condition-21"] .cell').map((c) => c.text());
    w.unmount();
    return texts;
  };

  it('keeps "Overdue" and "Upcoming" while the study runs', () => {
    expect(cells('running')).toEqual(['Overdue', 'Upcoming']);
  });

  it('says a pull never taken was not pulled, in the words of the report, once in review or decided', () => {
    expect(cells('in_review')).toEqual(['Not pulled, study in review', 'Not pulled, study in review']);
    expect(cells('decided')).toEqual(['Not pulled, study ended', 'Not pulled, study ended']);
  });
});

describe('the analysis page flags a best-before date already past', () => {
  const today = localDateInZone(new Date(), 'UTC');
  const card = (madeDate: string) => {
    setActivePinia(createPinia());
    const result: SuggestResult = {
      months: 12,
      basis: 'real_time',
      confidenceNote: '',
      governingReason: null,
      reasons: [],
      gates: [],
      blocked: false,
      storageInstructions: [],
      labelDating: labelDating({ shelfLifeMonths: 12, madeDate }),
      caution: SUGGEST_CAUTION,
    };
    return mount(SuggestionCard, { props: { variant: { id: 1, code: 'A', name: 'Variant A', lots: ['L-A'] }, result, dateFormat: 'YYYY-MM-DD' } });
  };

  it('a lot made over 12 months ago: its best-before date has passed', () => {
    const w = card(addDays(today, -400));
    expect(w.find('[data-testid="best-before-past"]').text()).toContain('Already passed');
    w.unmount();
  });

  it('a lot made today: no flag', () => {
    const w = card(today);
    expect(w.find('[data-testid="best-before-past"]').exists()).toBe(false);
    expect(w.text()).toContain('Best-before date');
    w.unmount();
  });
});
