/** Small pieces the study services share: the acting member, dates in the lab's zone, cycle length, field errors. */
import { localDateInZone } from '../../../shared/compute/schedule';
import type { ConditionKind } from '../../../shared/domain';
import { HttpError } from '../../http/errors';

export interface Actor {
  id: number;
  labId: number;
  timeZone: string;
}

export const bad = (fields: Record<string, string>) =>
  new HttpError(400, 'validation', `Invalid input: check ${Object.keys(fields).join(', ')}`, fields);

export const todayIn = (timeZone: string, now = new Date()) => localDateInZone(now, timeZone);

/** Length of one freeze-thaw cycle in hours, for cycle-based checkpoints. */
export function cycleHoursOf(c: { kind: ConditionKind; hoursLow: number | null; hoursHigh: number | null }): number | null {
  if (c.kind !== 'cycling' || c.hoursLow == null || c.hoursHigh == null) return null;
  return c.hoursLow + c.hoursHigh;
}
