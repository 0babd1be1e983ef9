/**
 * shared/compute/bench.ts: the Bench's order of locations, the checkpoint a sample code opens, and
 * reading a code from a scanned label URL. Rules of the lab's own making (common practice, no
 * published source); the URL shape is the label sheet's (server/services/study/samples.ts).
 */
import { describe, expect, it } from 'vitest';
import { dueCheckpoint, INITIAL_GROUP, orderBenchGroups, sampleCodeFrom, type DueCandidate } from '../../shared/compute/bench';
import type { CheckpointState } from '../../shared/compute/schedule';

const group = (location: string, ...cps: [CheckpointState, string][]) => ({
  location,
  conditions: [{ checkpoints: cps.map(([state, dueDate]) => ({ state, dueDate })) }],
});

describe('orderBenchGroups', () => {
  it('puts overdue work first, then due, then upcoming; ties by earliest due date, then name', () => {
    const out = orderBenchGroups([
      group('Bench shelf', ['upcoming', '2026-05-04']),
      group('Oven 2', ['due', '2026-05-01']),
      group('Fridge 1', ['upcoming', '2026-05-03'], ['overdue', '2026-04-20']),
      group('Climate cabinet', ['due', '2026-04-30']),
      group('Attic', ['upcoming', '2026-05-04']),
    ]);
    expect(out.map((g) => g.location)).toEqual(['Fridge 1', 'Climate cabinet', 'Oven 2', 'Attic', 'Bench shelf']);
  });

  it('keeps the initial test first only while it has work due or overdue', () => {
    const due = orderBenchGroups([group('Oven 2', ['overdue', '2026-04-01']), group(INITIAL_GROUP, ['due', '2026-05-01'])]);
    expect(due.map((g) => g.location)).toEqual([INITIAL_GROUP, 'Oven 2']);
    const later = orderBenchGroups([group(INITIAL_GROUP, ['upcoming', '2026-05-06']), group('Oven 2', ['due', '2026-05-01']), group('Fridge 1', ['upcoming', '2026-05-08'])]);
    expect(later.map((g) => g.location)).toEqual(['Oven 2', INITIAL_GROUP, 'Fridge 1']);
  });
});

describe('dueCheckpoint', () => {
  const cp = (id: number, dueDate: string, windowStart: string, windowEnd: string, extra: Partial<DueCandidate> = {}): DueCandidate => ({
    id,
    kind: 'pull',
    status: 'open',
    dueDate,
    windowStart,
    windowEnd,
    complete: false,
    ...extra,
  });
  const today = '2026-05-10';

  it('prefers the checkpoint whose window includes today over an overdue one', () => {
    const cps = [cp(1, '2026-05-01', '2026-04-30', '2026-05-02'), cp(2, '2026-05-10', '2026-05-09', '2026-05-11'), cp(3, '2026-06-01', '2026-05-31', '2026-06-02')];
    expect(dueCheckpoint(cps, today, false)?.id).toBe(2);
  });

  it('else the oldest overdue one, else the next upcoming one', () => {
    const overdue = [cp(3, '2026-06-01', '2026-05-31', '2026-06-02'), cp(2, '2026-05-03', '2026-05-02', '2026-05-04'), cp(1, '2026-04-01', '2026-03-31', '2026-04-02')];
    expect(dueCheckpoint(overdue, today, false)?.id).toBe(1);
    const upcoming = [cp(4, '2026-07-01', '2026-06-30', '2026-07-02'), cp(3, '2026-06-01', '2026-05-31', '2026-06-02')];
    expect(dueCheckpoint(upcoming, today, false)?.id).toBe(3);
  });

  it('skips checkpoints closed or already complete for this sample; a retained sample opens its initial test', () => {
    const cps = [
      cp(1, '2026-05-10', '2026-05-09', '2026-05-11', { complete: true }),
      cp(2, '2026-05-03', '2026-05-02', '2026-05-04', { status: 'missed' }),
      cp(3, '2026-06-01', '2026-05-31', '2026-06-02'),
    ];
    expect(dueCheckpoint(cps, today, false)?.id).toBe(3);
    expect(dueCheckpoint([cp(1, '2026-05-10', '2026-05-09', '2026-05-11', { complete: true })], today, false)).toBeNull();
    const initial = cp(7, '2026-05-01', '2026-05-01', '2026-05-02', { kind: 'initial', status: 'done', complete: true });
    expect(dueCheckpoint([initial], today, true)?.id).toBe(7);
  });
});

describe('sampleCodeFrom', () => {
  it('reads a bare code, in any case, with spaces around it', () => {
    expect(sampleCodeFrom(' k7qm2x ')).toBe('K7QM2X');
    expect(sampleCodeFrom('K7QM2X\n')).toBe('K7QM2X');
  });

  it("reads a label's QR URL, with or without a trailing slash, query or fragment", () => {
    expect(sampleCodeFrom('https://lab.example/samples/K7QM2X')).toBe('K7QM2X');
    expect(sampleCodeFrom('http://127.0.0.1:3000/samples/k7qm2x/')).toBe('K7QM2X');
    expect(sampleCodeFrom('https://lab.example/keepwell/samples/K7QM2X?from=label#top')).toBe('K7QM2X');
  });

  it('finds no code in other text', () => {
    expect(sampleCodeFrom('')).toBeNull();
    expect(sampleCodeFrom('K7Q')).toBeNull();
    expect(sampleCodeFrom('K7QM-2X')).toBeNull();
    expect(sampleCodeFrom('https://lab.example/studies/12')).toBeNull();
  });
});
