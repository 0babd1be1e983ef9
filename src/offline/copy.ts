/**
 * The copy of the Bench kept on this device while online: today's and the next 7 days' work and the
 * Record sheet of each sample there (day-0 and control values, criteria), so both open offline.
 * Saves waiting in the outbox are shown on top of it as "on this device, not yet sent".
 */
import type { BenchResponse } from '@shared/schemas/studies';
import type { ObservationView, OfflineCopy, RecordSheet } from '@shared/schemas/records';
import type { SessionUser } from '@shared/schemas/auth';
import { api } from '@/api/client';
import { liveEvaluation } from '@/components/record/format';
import { benchKey, offlineDb, sheetKey, type OutboxEntry } from './db';
import { outboxState } from './status';

/** A fresh copy at most this often (a save sent or the Bench opened refresh it). */
const REFRESH_MS = 2 * 60_000;
let lastRefresh = 0;
let refreshing: Promise<void> | null = null;

/** Fetches the copy and keeps it (replacing the member's previous one). */
export function refreshCopy(user: SessionUser, force = false): Promise<void> {
  if (refreshing) return refreshing;
  if (!force && Date.now() - lastRefresh < REFRESH_MS) return Promise.resolve();
  lastRefresh = Date.now();
  refreshing = (async () => {
    try {
      const copy = await api.get<OfflineCopy>('/bench/offline');
      const d = await offlineDb();
      const tx = d.transaction('copy', 'readwrite');
      // Sheets of this lab not in the new copy are dropped (work done or past).
      const prefix = `sheet:${user.lab.id}:`;
      for (const key of await tx.store.getAllKeys(IDBKeyRange.bound(prefix, `${prefix}\uffff`))) await tx.store.delete(key);
      await tx.store.put({ key: benchKey(user.lab.id, user.id), at: copy.at, bench: copy.bench, left: copy.left });
      for (const sheet of copy.sheets) await tx.store.put({ key: sheetKey(user.lab.id, sheet.sample.code, sheet.checkpoint.id), at: copy.at, sheet });
      await tx.done;
      outboxState.copyAt = copy.at;
    } catch {
      // Offline or refused: the previous copy stays.
    } finally {
      refreshing = null;
    }
  })();
  return refreshing;
}

/** Keeps one sheet as the server answered it (opened or saved online). */
export async function keepSheet(user: SessionUser, sheet: RecordSheet): Promise<void> {
  const d = await offlineDb();
  await d.put('copy', { key: sheetKey(user.lab.id, sheet.sample.code, sheet.checkpoint.id), at: new Date().toISOString(), sheet });
}

async function waitingFor(user: SessionUser): Promise<OutboxEntry[]> {
  const d = await offlineDb();
  return (await d.getAllFromIndex('outbox', 'byMember', [user.lab.id, user.id])).filter((e) => e.kind === 'reading' && e.state !== 'refused');
}

/** The Bench as kept, with the outbox's saves counted as recorded; null when no copy is kept. */
export async function benchCopy(user: SessionUser): Promise<{ bench: BenchResponse; at: string; left: number } | null> {
  const d = await offlineDb();
  const kept = await d.get('copy', benchKey(user.lab.id, user.id));
  if (!kept?.bench) return null;
  outboxState.copyAt = kept.at;
  const waiting = await waitingFor(user);
  const bench = structuredClone(kept.bench);
  for (const g of bench.groups)
    for (const c of g.conditions)
      for (const cp of c.checkpoints)
        for (const s of cp.samples) {
          const n = waiting.filter((e) => e.code === s.code && e.checkpointId === cp.id).reduce((k, e) => k + (e.entries?.length ?? 0), 0);
          s.recorded = Math.min(cp.attributeCount, s.recorded + n);
          cp.toRecord = Math.max(0, cp.toRecord - n);
        }
  return { bench, at: kept.at, left: kept.left ?? 0 };
}

/** One Record sheet as kept, with the outbox's saves on it; null when it is not in the copy. */
export async function sheetCopy(user: SessionUser, code: string, checkpointId: number): Promise<{ sheet: RecordSheet; at: string } | null> {
  const d = await offlineDb();
  const kept = await d.get('copy', sheetKey(user.lab.id, code, checkpointId));
  if (!kept?.sheet) return null;
  return { sheet: await withOutbox(user, kept.sheet), at: kept.at };
}

/** The sheet with the readings waiting in the outbox shown as recorded on this device (negative ids). */
export async function withOutbox(user: SessionUser, sheet: RecordSheet): Promise<RecordSheet> {
  const mine = (await waitingFor(user)).filter((e) => e.code === sheet.sample.code && e.checkpointId === sheet.checkpoint.id);
  if (!mine.length) return sheet;
  const out = JSON.parse(JSON.stringify(sheet)) as RecordSheet; // the sheet may be a Vue proxy, which structuredClone refuses
  for (const e of mine) {
    for (const entry of e.entries ?? []) {
      const item = out.attributes.find((a) => a.studyAttributeId === entry.studyAttributeId);
      if (!item || item.current) continue;
      const value = entry.value ?? null;
      const ev = value === null ? null : liveEvaluation(item.attribute, item.criterion, value, item.baseline?.value, sheet.checkpoint.kind === 'initial');
      const view: ObservationView = {
        id: -(e.seq ?? 1),
        value,
        method: entry.method ?? null,
        verdict: entry.notDoneReason ? 'not_done' : (ev?.verdict ?? 'no_criterion'),
        message: ev?.message ?? '',
        notDoneReason: entry.notDoneReason ?? null,
        recordedBy: `${e.userName} (on this device, not yet sent)`,
        recordedAt: e.deviceRecordedAt,
        version: 1,
        voided: false,
        device: { recordedAt: e.deviceRecordedAt, clockOffsetS: null, clockSkewed: false },
        investigation: null,
      };
      item.current = view;
    }
  }
  const complete = out.attributes.every((a) => a.current);
  out.siblings = out.siblings.map((s) => (s.code === out.sample.code ? { ...s, complete } : s));
  return out;
}

/** Offline, a typed or scanned code: the checkpoint of that sample in the Bench's copy, earliest due first; null when not there. */
export async function dueInCopy(user: SessionUser, code: string): Promise<number | null> {
  const d = await offlineDb();
  const kept = await d.get('copy', benchKey(user.lab.id, user.id));
  const found: { id: number; due: string }[] = [];
  for (const g of kept?.bench?.groups ?? [])
    for (const c of g.conditions) for (const cp of c.checkpoints) if (cp.samples.some((s) => s.code === code.toUpperCase())) found.push({ id: cp.id, due: cp.dueDate });
  found.sort((a, b) => a.due.localeCompare(b.due));
  return found[0]?.id ?? null;
}
