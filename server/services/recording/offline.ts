/**
 * The copy a device keeps for working offline (issue 18): the Bench for today and the next 7 days,
 * and the Record sheet of each of its samples at each of its checkpoints (day-0 and control values,
 * criteria), as the online screens show them.
 */
import type { OfflineCopy, RecordSheet } from '../../../shared/schemas/records';
import type { Db } from '../../db/client';
import { bench } from '../study/bench';
import { recordSheet } from './sheet';

/** At most this many sheets in one copy (the oldest due first); the Bench says when some were left out. */
export const OFFLINE_SHEET_LIMIT = 400;
export const OFFLINE_DAYS = 7;

export async function offlineCopy(db: Db, labId: number, userId: number, today: string): Promise<OfflineCopy> {
  const b = await bench(db, labId, today, OFFLINE_DAYS, userId);
  const wanted: { code: string; checkpointId: number; due: string }[] = [];
  for (const g of b.groups) for (const c of g.conditions) for (const cp of c.checkpoints) for (const s of cp.samples) wanted.push({ code: s.code, checkpointId: cp.id, due: cp.dueDate });
  wanted.sort((x, y) => x.due.localeCompare(y.due));
  const sheets: RecordSheet[] = [];
  // A few at a time: each sheet is a handful of small queries.
  const take = wanted.slice(0, OFFLINE_SHEET_LIMIT);
  for (let i = 0; i < take.length; i += 4) {
    sheets.push(...(await Promise.all(take.slice(i, i + 4).map((w) => recordSheet(db, labId, w.code, w.checkpointId, today)))));
  }
  return { bench: b, sheets, left: wanted.length - take.length, at: new Date().toISOString() };
}
