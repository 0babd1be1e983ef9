/**
 * Checkpoint states in words: the badge label, and one line that says how late or how soon
 * ("Overdue 3 days", "Due today", "Due in 2 days"). Pure; the lab-local date is passed in.
 */
import { daysBetween, type CheckpointState } from '@shared/compute/schedule';
import { dayCount, relativeDay } from './dates';

/** Every state a checkpoint can show, including a cancelled one (condition ended or study cancelled). */
export type ShownState = CheckpointState | 'cancelled';

export const SHOWN_STATES: readonly ShownState[] = ['overdue', 'due', 'upcoming', 'done', 'missed', 'cancelled'];

export const STATE_LABELS: Readonly<Record<ShownState, string>> = {
  upcoming: 'Upcoming',
  due: 'Due',
  overdue: 'Overdue',
  done: 'Done',
  missed: 'Missed',
  cancelled: 'Cancelled',
};

/** What each state means, for legends. */
export const STATE_MEANINGS: Readonly<Record<ShownState, string>> = {
  upcoming: 'window not open yet',
  due: 'window open: record now',
  overdue: 'window closed, nothing recorded',
  done: 'all readings recorded',
  missed: 'window passed, marked missed with a reason',
  cancelled: 'condition ended or study cancelled',
};

/** Where a checkpoint stands against the calendar. */
export interface DatedCheckpoint {
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  state: ShownState;
}

/** One short line beside the badge: "Overdue 3 days", "Due today", "Due yesterday, window open until ...". */
export function stateDetail(cp: DatedCheckpoint, today: string): string {
  switch (cp.state) {
    case 'overdue': {
      const late = Math.max(1, daysBetween(cp.dueDate, today));
      return `Overdue ${dayCount(late)}`;
    }
    case 'due': {
      const toDue = daysBetween(today, cp.dueDate);
      if (toDue === 0) return 'Due today';
      if (toDue > 0) return `Due ${relativeDay(cp.dueDate, today)}, window open`;
      const left = daysBetween(today, cp.windowEnd);
      return `Due ${relativeDay(cp.dueDate, today)}, ${left === 0 ? 'last day of the window' : `window open ${dayCount(left)} more`}`;
    }
    case 'upcoming':
      return `Due ${relativeDay(cp.dueDate, today)}`;
    case 'done':
      return 'All readings recorded';
    case 'missed':
      return 'Marked missed';
    case 'cancelled':
      return 'Cancelled';
  }
}

/** Order of work at the bench: overdue first, then due, then upcoming; earlier due dates first. */
export function benchOrder(a: { state: ShownState; dueDate: string }, b: { state: ShownState; dueDate: string }): number {
  const rank = (s: ShownState) => SHOWN_STATES.indexOf(s);
  return rank(a.state) - rank(b.state) || daysBetween(b.dueDate, a.dueDate);
}

/** True when a checkpoint may be marked missed: its window has closed and it is neither done nor closed otherwise. */
export function canMarkMissed(cp: DatedCheckpoint, today: string): boolean {
  return cp.state === 'overdue' && daysBetween(cp.windowEnd, today) > 0;
}
