import { describe, expect, it } from 'vitest';
import { extrapolationCap, type ExtrapolationInput } from '../../shared/compute/extrapolation';

// All expected caps below: from memory, ICH Q1E decision tree (Appendix A), as
// summarised in the brief (significant change at accelerated kept to X + 3).
const base: ExtrapolationInput = {
  realTimeMonths: 12,
  storage: 'room',
  acceleratedSignificantChange: false,
  lowVariability: false,
  statisticsSupport: true,
};

describe('extrapolationCap (from memory, ICH Q1E decision tree)', () => {
  it('room, no significant change, statistics: 2X while 2X ≤ X + 12', () => {
    // X = 6: 2X = 12 < X + 12 = 18 -> 12.
    expect(extrapolationCap({ ...base, realTimeMonths: 6 }).capMonths).toBe(12);
    // X = 12: 2X = 24 = X + 12 -> 24 (the boundary where both limits agree).
    const at12 = extrapolationCap(base);
    expect(at12.capMonths).toBe(24);
    expect(at12.ruleId).toBe('room_2x_12');
    expect(at12.rule).toBe(
      'ICH Q1E: no significant change at accelerated, data amenable to statistics: up to 2X but not more than X + 12 months.',
    );
  });

  it('room, no significant change, statistics: X + 12 once 2X exceeds it', () => {
    // X = 24: 2X = 48 > X + 12 = 36 -> 36.
    expect(extrapolationCap({ ...base, realTimeMonths: 24 }).capMonths).toBe(36);
    // X = 18: 2X = 36 > 30 -> 30.
    expect(extrapolationCap({ ...base, realTimeMonths: 18 }).capMonths).toBe(30);
  });

  it('room, little change and variability without statistics also allows 2X / X + 12', () => {
    const r = extrapolationCap({ ...base, realTimeMonths: 9, statisticsSupport: false, lowVariability: true });
    expect(r.capMonths).toBe(18);
    expect(r.rule).toMatch(/little change and little variability/);
  });

  it('room, no significant change, neither statistics nor low variability: 1.5X / X + 6', () => {
    const noStats = { ...base, statisticsSupport: false };
    // X = 12: 1.5X = 18 = X + 6 -> 18 (boundary).
    expect(extrapolationCap(noStats).capMonths).toBe(18);
    // X = 6: 1.5X = 9 < 12 -> 9.
    expect(extrapolationCap({ ...noStats, realTimeMonths: 6 }).capMonths).toBe(9);
    // X = 24: 1.5X = 36 > 30 -> 30.
    const r = extrapolationCap({ ...noStats, realTimeMonths: 24 });
    expect(r.capMonths).toBe(30);
    expect(r.ruleId).toBe('room_1_5x_6');
    expect(r.rule).toMatch(/up to 1\.5X but not more than X \+ 6 months/);
  });

  it('room, significant change at accelerated: far less, X + 3', () => {
    const r = extrapolationCap({ ...base, acceleratedSignificantChange: true });
    expect(r.capMonths).toBe(15);
    expect(r.rule).toMatch(/far less/);
    expect(r.rule).toMatch(/X \+ 3/);
  });

  it('refrigerated: 1.5X / X + 6, X + 3 without statistics, none with significant change at accelerated', () => {
    const fridge = { ...base, storage: 'refrigerated' as const };
    expect(extrapolationCap({ ...fridge, realTimeMonths: 6 }).capMonths).toBe(9);
    expect(extrapolationCap({ ...fridge, realTimeMonths: 12 }).capMonths).toBe(18);
    expect(extrapolationCap({ ...fridge, realTimeMonths: 24 }).capMonths).toBe(30);
    expect(extrapolationCap({ ...fridge, statisticsSupport: false }).capMonths).toBe(15);
    const sig = extrapolationCap({ ...fridge, acceleratedSignificantChange: true });
    expect(sig.capMonths).toBe(12);
    expect(sig.ruleId).toBe('refrigerated_none');
  });

  it('frozen: no extrapolation', () => {
    const r = extrapolationCap({ ...base, storage: 'frozen', realTimeMonths: 18, lowVariability: true });
    expect(r.capMonths).toBe(18);
    expect(r.rule).toMatch(/no extrapolation/);
  });

  it('null with a message for an impossible span', () => {
    const r = extrapolationCap({ ...base, realTimeMonths: Number.NaN });
    expect(r.capMonths).toBeNull();
    expect(r.ruleId).toBe('invalid');
    expect(extrapolationCap({ ...base, realTimeMonths: -1 }).capMonths).toBeNull();
  });
});
