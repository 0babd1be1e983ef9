/**
 * Everything for working offline, in one chunk loaded on demand (and precached by the service
 * worker): the copy, the outbox, the service worker's registration.
 */
import type { SessionUser } from '@shared/schemas/auth';
import { refreshCopy } from './copy';
import { recount, sendAll } from './outbox';
import { registerServiceWorker } from './sw';
import { outboxState } from './status';

export { benchCopy, dueInCopy, keepSheet, refreshCopy, sheetCopy, withOutbox } from './copy';
export { drop, keepAsCorrection, listOutbox, PHOTO_LIMITS, queuePhoto, queueSave, recount, sendAll, signInAgain } from './outbox';
export type { OutboxEntry } from './db';

let started: SessionUser | null = null;
let current: () => SessionUser | null = () => null;

/** Once per page: the service worker, the outbox's count, and sending when the connection returns. */
export async function startOffline(user: () => SessionUser | null): Promise<void> {
  current = user;
  registerServiceWorker();
  const u = user();
  if (!u) return;
  await recount(u);
  if (started) return;
  started = u;
  // The service worker has just taken over (first install): keep the copy now.
  navigator.serviceWorker?.addEventListener('controllerchange', () => {
    const me = current();
    if (me && navigator.onLine) void refreshCopy(me, true);
  });
  window.addEventListener('online', () => {
    const me = current();
    if (me && !outboxState.needsPassword) void sendAll(me);
  });
  if (navigator.onLine && outboxState.waiting) void sendAll(u);
}
