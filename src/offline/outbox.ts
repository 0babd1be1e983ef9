/**
 * The outbox: saves and photos made without a connection, kept in IndexedDB with a client-made id,
 * the device's time and the member, and sent in order (readings first, then photos) when the
 * connection returns or on demand. The server keeps each save once under its id. Refused entries
 * stay here with the reason; a cell recorded meanwhile by someone else shows both values, to keep
 * this one as a correction (with a reason) or drop it. A session that ended asks for the password.
 */
import { recordInput, type RecordEntry, type RecordSheet, type RevisionView } from '@shared/schemas/records';
import type { SessionUser } from '@shared/schemas/auth';
import { apiInit } from '@/api/client';
import { valueText } from '@/components/record/format';
import { offlineDb, sheetKey, type OutboxConflict, type OutboxEntry } from './db';
import { keepSheet } from './copy';
import { outboxState } from './status';

/** Photos wait on the device up to these sizes (the server takes 15 MB per file). */
export const PHOTO_LIMITS = { fileBytes: 15 * 1024 * 1024, totalBytes: 100 * 1024 * 1024 };

const sheetPath = (code: string, checkpointId: number) => `/api/samples/${encodeURIComponent(code)}/checkpoints/${checkpointId}`;

interface Answer {
  status: number;
  body: { error?: { code?: string; message?: string; fields?: Record<string, string> }; sheet?: RecordSheet; history?: RevisionView[] } | null;
}

/** A request without the API client's redirect to sign-in (a 401 here asks for the password instead). */
async function call(method: 'GET' | 'PUT' | 'POST', path: string, body?: unknown): Promise<Answer | null> {
  try {
    const res = await fetch(path, apiInit(method, body));
    return { status: res.status, body: await res.json().catch(() => null) };
  } catch {
    return null;
  }
}

export async function listOutbox(user: SessionUser): Promise<OutboxEntry[]> {
  const d = await offlineDb();
  return d.getAllFromIndex('outbox', 'byMember', [user.lab.id, user.id]);
}

/** Recounts what waits and what needs attention (the app shell shows both). */
export async function recount(user: SessionUser | null): Promise<void> {
  const all = user ? await listOutbox(user) : [];
  outboxState.waiting = all.length;
  outboxState.attention = all.filter((e) => e.state !== 'waiting').length;
}

/** Keeps a save on this device: checked as the server would, then queued. */
export async function queueSave(user: SessionUser, sheet: RecordSheet, entries: RecordEntry[], allowEarly: boolean): Promise<OutboxEntry> {
  recordInput.parse({ entries, ...(allowEarly ? { allowEarly } : {}) });
  const entry: OutboxEntry = {
    clientId: crypto.randomUUID(),
    kind: 'reading',
    labId: user.lab.id,
    userId: user.id,
    userName: user.name,
    code: sheet.sample.code,
    checkpointId: sheet.checkpoint.id,
    checkpointLabel: sheet.checkpoint.label,
    entries,
    ...(allowEarly ? { allowEarly } : {}),
    deviceRecordedAt: new Date().toISOString(),
    state: 'waiting',
  };
  const d = await offlineDb();
  entry.seq = await d.add('outbox', entry);
  await recount(user);
  return entry;
}

/** Keeps a photo on this device (within PHOTO_LIMITS); a message when it does not fit. */
export async function queuePhoto(user: SessionUser, target: { code: string; checkpointId: number }, file: File): Promise<string | null> {
  if (file.size > PHOTO_LIMITS.fileBytes) return `${file.name} is larger than 15 MB`;
  const waiting = (await listOutbox(user)).reduce((n, e) => n + (e.photo?.size ?? 0), 0);
  if (waiting + file.size > PHOTO_LIMITS.totalBytes) return 'Photos waiting on this device are limited to 100 MB in all; send them first';
  const d = await offlineDb();
  const copy = await d.get('copy', sheetKey(user.lab.id, target.code, target.checkpointId));
  await d.add('outbox', {
    clientId: crypto.randomUUID(),
    kind: 'photo',
    labId: user.lab.id,
    userId: user.id,
    userName: user.name,
    code: target.code.toUpperCase(),
    checkpointId: target.checkpointId,
    checkpointLabel: copy?.sheet?.checkpoint.label ?? `checkpoint ${target.checkpointId}`,
    photo: { blob: new Blob([await file.arrayBuffer()], { type: file.type }), name: file.name, type: file.type, size: file.size },
    deviceRecordedAt: new Date().toISOString(),
    state: 'waiting',
  });
  await recount(user);
  return null;
}

async function update(entry: OutboxEntry): Promise<void> {
  await (await offlineDb()).put('outbox', entry);
}
async function remove(entry: OutboxEntry): Promise<void> {
  await (await offlineDb()).delete('outbox', entry.seq!);
}

/** After a 409 naming cells: what the server has beside what this device kept. */
async function conflictsOf(entry: OutboxEntry, fields: Record<string, string>): Promise<OutboxConflict[] | null> {
  const res = await call('GET', sheetPath(entry.code, entry.checkpointId));
  const sheet = res?.status === 200 ? res.body?.sheet : null;
  if (!sheet) return null;
  const out: OutboxConflict[] = [];
  for (const key of Object.keys(fields)) {
    const m = /^entries\.(\d+)\./.exec(key);
    const e = m ? entry.entries?.[Number(m[1])] : undefined;
    const item = e && sheet.attributes.find((a) => a.studyAttributeId === e.studyAttributeId);
    if (!e || !item?.current) continue;
    out.push({
      studyAttributeId: e.studyAttributeId,
      name: item.attribute.name,
      entry: e,
      mine: e.notDoneReason ? `not done (${e.notDoneReason})` : valueText(item.attribute, e.value ?? null),
      theirs: item.current.verdict === 'not_done' ? 'not done' : valueText(item.attribute, item.current.value),
      theirsBy: item.current.recordedBy,
      observationId: item.current.id,
    });
  }
  return out;
}

type Outcome = 'sent' | 'kept' | 'stop';

async function sendReading(user: SessionUser, entry: OutboxEntry): Promise<Outcome> {
  const body = { entries: entry.entries!, ...(entry.allowEarly ? { allowEarly: true } : {}), clientId: entry.clientId, deviceRecordedAt: entry.deviceRecordedAt, deviceSentAt: new Date().toISOString() };
  const res = await call('PUT', `${sheetPath(entry.code, entry.checkpointId)}/observations`, body);
  if (!res || res.status >= 502) return 'stop';
  if (res.status === 401) {
    outboxState.needsPassword = true;
    return 'stop';
  }
  if (res.status === 200) {
    await remove(entry);
    if (res.body?.sheet) await keepSheet(user, res.body.sheet).catch(() => undefined);
    return 'sent';
  }
  const err = res.body?.error ?? {};
  const cells = Object.keys(err.fields ?? {}).filter((k) => k.startsWith('entries.'));
  if (res.status === 409 && cells.length) {
    const conflicts = await conflictsOf(entry, err.fields!);
    if (!conflicts) return 'stop';
    const clash = new Set(conflicts.map((c) => c.studyAttributeId));
    // The same value recorded meanwhile is no conflict; the cells not recorded yet are sent at once.
    const differing = conflicts.filter((c) => c.mine !== c.theirs);
    const rest = (entry.entries ?? []).filter((e) => !clash.has(e.studyAttributeId));
    if (rest.length) {
      const again = await sendReading(user, { ...entry, entries: rest });
      if (again !== 'sent') return again;
    }
    if (!differing.length) {
      await remove(entry);
      return 'sent';
    }
    await update({ ...entry, entries: differing.map((c) => c.entry), state: 'conflict', conflicts: differing, reason: 'Recorded meanwhile by someone else' });
    return 'kept';
  }
  // Refused (another lab's sample, a checkpoint closed meanwhile, a value no longer valid): kept with the reason.
  await update({ ...entry, state: 'refused', reason: err.message ?? `Refused (${res.status})` });
  return 'kept';
}

async function sendPhoto(entry: OutboxEntry): Promise<Outcome> {
  const form = new FormData();
  form.append('clientId', entry.clientId);
  form.append('photos', new File([entry.photo!.blob], entry.photo!.name, { type: entry.photo!.type }));
  const res = await call('POST', `${sheetPath(entry.code, entry.checkpointId)}/photos`, form);
  if (!res || res.status >= 502) return 'stop';
  if (res.status === 401) {
    outboxState.needsPassword = true;
    return 'stop';
  }
  if (res.status === 200 || res.status === 201) {
    await remove(entry);
    return 'sent';
  }
  await update({ ...entry, state: 'refused', reason: res.body?.error?.message ?? `Refused (${res.status})` });
  return 'kept';
}

let running: Promise<number> | null = null;

/** Sends what waits, in order: readings first, then photos. Answers how many were sent. */
export function sendAll(user: SessionUser): Promise<number> {
  return (running ??= (async () => {
    outboxState.sending = true;
    let sent = 0;
    try {
      const waiting = (await listOutbox(user)).filter((e) => e.state === 'waiting');
      const ordered = [...waiting.filter((e) => e.kind === 'reading'), ...waiting.filter((e) => e.kind === 'photo')];
      for (const e of ordered) {
        const r = e.kind === 'reading' ? await sendReading(user, e) : await sendPhoto(e);
        if (r === 'stop') break;
        if (r === 'sent') sent++;
      }
    } finally {
      await recount(user);
      outboxState.sending = false;
      running = null;
    }
    return sent;
  })());
}

/** Keeps this device's values of a conflicting entry as corrections of what was recorded meanwhile. */
export async function keepAsCorrection(user: SessionUser, entry: OutboxEntry, reason: string): Promise<string | null> {
  for (const c of entry.conflicts ?? []) {
    if (c.entry.value == null) return `${c.name}: "not done" cannot be a correction; drop it or correct the value on the Record screen`;
    const res = await call('POST', `/api/observations/${c.observationId}/corrections`, { value: c.entry.value, ...(c.entry.method ? { method: c.entry.method } : {}), reason });
    if (!res) return 'Cannot reach the server. Check the connection and try again.';
    if (res.status === 401) {
      outboxState.needsPassword = true;
      return 'Your session has ended: enter your password first';
    }
    if (res.status !== 200) return res.body?.error?.fields?.reason ?? res.body?.error?.message ?? `Refused (${res.status})`;
  }
  await remove(entry);
  await recount(user);
  return null;
}

export async function drop(user: SessionUser, entry: OutboxEntry): Promise<void> {
  await remove(entry);
  await recount(user);
}

/** Signs in again after the session ended offline, then sends what waits. */
export async function signInAgain(user: SessionUser, password: string): Promise<string | null> {
  const res = await call('POST', '/api/auth/sign-in', { email: user.email, password });
  if (!res) return 'Cannot reach the server. Check the connection and try again.';
  if (res.status !== 200) return res.body?.error?.message ?? 'Sign-in refused';
  outboxState.needsPassword = false;
  void sendAll(user);
  return null;
}
