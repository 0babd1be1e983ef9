/**
 * Say only what is true: the gate summary over the stress tests and the control, and a report
 * schedule's state once a study has ended. Our own wording rules; no outside source involved.
 */
import { describe, expect, it } from 'vitest';
import { gateSummary, suggestShelfLife, type SuggestReason } from '../../shared/compute/suggest';
import { notPulled, scheduleStateText } from '../../shared/schedule-words';

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
