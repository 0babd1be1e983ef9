/**
 * The outbox's state for every page (the app shell shows it), and the offline kit loaded on demand:
 * IndexedDB, the Bench's copy, the outbox and the service worker stay out of the Bench's first load.
 */
import { reactive } from 'vue';
import { ApiError } from '@/api/client';

export const outboxState = reactive({
  /** Saves and photos kept on this device, not yet sent. */
  waiting: 0,
  /** Entries the server refused or that conflict: kept here for the technician to see. */
  attention: 0,
  sending: false,
  /** The session ended while offline: the password is asked before sending. */
  needsPassword: false,
  /** The copy kept for working offline: when it was made (ISO), null before the first. */
  copyAt: null as string | null,
});

type Kit = typeof import('./offline-kit');
let kit: Promise<Kit> | null = null;
/** The offline kit (its own chunk, precached by the service worker). */
export function offlineKit(): Promise<Kit> {
  // A failed load (offline before the chunk was cached) is tried again next time.
  return (kit ??= import('./offline-kit').catch((e: unknown) => {
    kit = null;
    throw e;
  }));
}

/** No answer from the server (offline, or a gateway in between down). */
export function isOffline(e: unknown): boolean {
  return e instanceof ApiError && (e.status === 0 || e.status === 502 || e.status === 503 || e.status === 504);
}
