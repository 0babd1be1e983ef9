/**
 * The Bench's copy on this device: refreshed in the background after the Bench loads online (once the
 * service worker controls the page: without it the app cannot open offline anyway), read
 * when the server cannot be reached (issue 18). The offline kit loads only when needed.
 */
import { ref } from 'vue';
import type { BenchResponse } from '@shared/schemas/studies';
import { useSessionStore } from '@/stores/session';
import { offlineKit } from './status';

export function useBenchCopy() {
  const session = useSessionStore();
  /** Shown from the copy made then (ISO), or null when the Bench came from the server. */
  const copiedAt = ref<string | null>(null);

  /** Refreshes the copy once the app works offline on this device (its service worker controls the page). */
  function keep() {
    copiedAt.value = null;
    const u = session.user;
    if (u && navigator.serviceWorker?.controller) void offlineKit().then((k) => k.refreshCopy(u)).catch(() => undefined);
  }

  async function read(): Promise<BenchResponse | null> {
    const u = session.user;
    if (!u) return null;
    try {
      const c = await (await offlineKit()).benchCopy(u);
      copiedAt.value = c?.at ?? null;
      return c?.bench ?? null;
    } catch {
      return null;
    }
  }

  return { copiedAt, keep, read };
}
