/**
 * Saves sent from a device's outbox: the client id as an idempotency key (a resend with the same id
 * and the same values answers the saved result and changes nothing; the same id with other values
 * is refused, 409, and logged), and the device's times beside the server's.
 */
import { createHash } from 'node:crypto';
import { and, eq } from 'drizzle-orm';
import { z } from 'zod';
import { CLOCK_SKEW_LIMIT_S, type DeviceTimes, type RecordEntry } from '../../../shared/schemas/records';
import type { DbOrTx } from '../../db/client';
import { observations, photos } from '../../db/schema';
import { conflict, HttpError } from '../../http/errors';

export interface DeviceSave {
  clientId?: string;
  deviceRecordedAt?: string;
  deviceSentAt?: string;
}

/** What a save sent, in a fixed order, hashed: the same save sent again hashes the same. */
export function saveHash(code: string, checkpointId: number, entries: RecordEntry[]): string {
  const canon = entries
    .map((e) => [e.studyAttributeId, e.value ?? null, e.method ? Object.entries(e.method).sort(([a], [b]) => a.localeCompare(b)) : null, e.notDoneReason ?? null])
    .sort((a, b) => Number(a[0]) - Number(b[0]));
  return createHash('sha256').update(JSON.stringify([code.toUpperCase(), checkpointId, canon])).digest('hex');
}

/**
 * Looks the client id up in the lab: 'new' when unused, 'replay' when the same save was already
 * kept; throws 409 when the id was used for other values.
 */
export async function checkClientId(tx: DbOrTx, labId: number, userId: number, device: DeviceSave, hash: string): Promise<'new' | 'replay'> {
  if (!device.clientId) return 'new';
  const kept = await tx
    .select({ id: observations.id, hash: observations.clientHash })
    .from(observations)
    .where(and(eq(observations.labId, labId), eq(observations.clientId, device.clientId)));
  if (!kept.length) return 'new';
  if (kept.every((k) => k.hash === hash)) return 'replay';
  // Logged for the lab's administrator: a device sent other values under an id already used.
  console.warn(JSON.stringify({ event: 'outbox_id_reused', labId, userId, clientId: device.clientId, observationIds: kept.map((k) => k.id) }));
  throw conflict('This save was already sent with other values; it was not saved again', { clientId: 'Already used for other values' });
}

/** The columns a device save adds to each observation. */
export function deviceColumns(device: DeviceSave, hash: string, now = new Date()) {
  if (!device.clientId && !device.deviceRecordedAt) return {};
  const sent = device.deviceSentAt ?? device.deviceRecordedAt;
  return {
    clientId: device.clientId ?? null,
    clientHash: device.clientId ? hash : null,
    deviceRecordedAt: device.deviceRecordedAt ? new Date(device.deviceRecordedAt) : null,
    deviceClockOffsetS: sent ? Math.round((now.getTime() - new Date(sent).getTime()) / 1000) : null,
  };
}

/** The device's times of a stored observation, for the screens. */
export function deviceTimes(o: { deviceRecordedAt: Date | null; deviceClockOffsetS: number | null }): DeviceTimes | null {
  if (!o.deviceRecordedAt) return null;
  return {
    recordedAt: o.deviceRecordedAt.toISOString(),
    clockOffsetS: o.deviceClockOffsetS,
    clockSkewed: o.deviceClockOffsetS != null && Math.abs(o.deviceClockOffsetS) > CLOCK_SKEW_LIMIT_S,
  };
}

/** The `clientId` field of a photo upload (multipart), checked as a UUID; 400 when malformed. */
export function photoClientId(body: unknown): string | null {
  const raw = (body as Record<string, unknown> | undefined)?.clientId;
  if (raw === undefined) return null;
  const ok = z.uuid().safeParse(raw);
  if (!ok.success) throw new HttpError(400, 'validation', 'clientId: a UUID made on the device', { clientId: 'A UUID made on the device' });
  return ok.data;
}

/** Whether a photo with this client id is already kept in the lab. */
export async function photoSent(db: DbOrTx, labId: number, clientId: string): Promise<boolean> {
  const [p] = await db.select({ id: photos.id }).from(photos).where(and(eq(photos.labId, labId), eq(photos.clientId, clientId)));
  return Boolean(p);
}

/** A duplicate-key error (MariaDB errno 1062), directly or as a driver error's cause. */
export function isDuplicateKey(err: unknown): boolean {
  const e = err as { errno?: number; cause?: { errno?: number } } | null;
  return e?.errno === 1062 || e?.cause?.errno === 1062;
}
