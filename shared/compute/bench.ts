/**
 * The Bench's order and a sample's due checkpoint: which location to open first, and which
 * checkpoint a scanned sample code opens. Common practice, no published source.
 */
import type { CheckpointState } from './schedule';

/** Where the Bench lists the initial test (the batches' retained samples, read before storage). */
export const INITIAL_GROUP = 'Initial test (before storage)';

interface GroupLike {
  location: string;
  conditions: { checkpoints: { state: CheckpointState; dueDate: string }[] }[];
}

/** 0: has overdue work, 1: has work due today, 2: only upcoming work. */
export function groupUrgency(g: GroupLike): number {
  const states = g.conditions.flatMap((c) => c.checkpoints.map((cp) => cp.state));
  if (states.includes('overdue')) return 0;
  if (states.includes('due')) return 1;
  return 2;
}

/**
 * Locations in order of urgency: those with overdue work first, then those with work due today,
 * then those with only upcoming work. The initial test comes first whenever it has work due or
 * overdue (the samples are read before they go into storage); otherwise it is ordered like the
 * rest. Ties: the earliest due date first, then the location's name.
 */
export function orderBenchGroups<G extends GroupLike>(groups: G[]): G[] {
  const earliest = (g: G) => g.conditions.flatMap((c) => c.checkpoints.map((cp) => cp.dueDate)).sort()[0] ?? '9999-12-31';
  const key = (g: G) => {
    const u = groupUrgency(g);
    return { first: g.location === INITIAL_GROUP && u < 2 ? 0 : 1, u, due: earliest(g) };
  };
  return [...groups].sort((a, b) => {
    const ka = key(a);
    const kb = key(b);
    return ka.first - kb.first || ka.u - kb.u || ka.due.localeCompare(kb.due) || a.location.localeCompare(b.location);
  });
}

export interface DueCandidate {
  id: number;
  kind: string;
  status: string;
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  /** This sample's readings at the checkpoint are all saved. */
  complete: boolean;
}

/**
 * The checkpoint a sample code opens at the bench. A retained sample: the initial test (its only
 * checkpoint). Otherwise, of the open checkpoints where this sample still has readings to take:
 * the one whose window includes today (the earliest due first), else the oldest overdue one, else
 * the next upcoming one. Null when nothing is left to record for this sample.
 */
export function dueCheckpoint<C extends DueCandidate>(cps: C[], today: string, retained: boolean): C | null {
  if (retained) return cps.find((c) => c.kind === 'initial') ?? null;
  const todo = cps.filter((c) => c.status === 'open' && !c.complete).sort((a, b) => a.dueDate.localeCompare(b.dueDate) || a.id - b.id);
  return (
    todo.find((c) => c.windowStart <= today && today <= c.windowEnd) ??
    todo.find((c) => c.windowEnd < today) ??
    todo.find((c) => c.windowStart > today) ??
    null
  );
}

/**
 * The sample code in what a scanner or a person typed: a bare code ("K7QM2X") or a label's QR
 * URL (`<origin>/samples/<CODE>`, with or without a trailing slash, query or fragment). Null when
 * it holds no code of 4 to 12 letters and digits.
 */
export function sampleCodeFrom(input: string): string | null {
  const text = input.trim();
  const fromUrl = /\/samples\/([0-9A-Za-z]{4,12})\/?(?:[?#].*)?$/.exec(text);
  const code = (fromUrl ? fromUrl[1] : text).toUpperCase();
  return /^[0-9A-Z]{4,12}$/.test(code) ? code : null;
}
