/**
 * A checkpoint's state in a report's schedule, only what is true: once a study is decided or
 * cancelled, a pull still open was never taken and never will be; it is not "overdue" or "upcoming".
 */
import type { CheckpointState } from './compute/schedule';
import type { StudyStatus } from './domain';

const WORDS: Readonly<Record<CheckpointState | 'cancelled', string>> = {
  upcoming: 'Upcoming',
  due: 'Due',
  overdue: 'Overdue',
  done: 'Done',
  missed: 'Missed',
  cancelled: 'Cancelled',
};

/** True for a pull not taken (upcoming, due or overdue) of a study that is no longer running. */
export function notPulled(state: CheckpointState | 'cancelled', status: StudyStatus): boolean {
  return (state === 'upcoming' || state === 'due' || state === 'overdue') && status !== 'running' && status !== 'draft';
}

/** "Overdue" in a running study; "Not pulled, study ended" in a decided or cancelled one; "Not pulled, study in review" while in review. */
export function scheduleStateText(state: CheckpointState | 'cancelled', status: StudyStatus): string {
  if (!notPulled(state, status)) return WORDS[state] ?? state;
  return status === 'in_review' ? 'Not pulled, study in review' : 'Not pulled, study ended';
}
