/** Photos of one sample at one checkpoint kept in this device's outbox (taken without a connection). */
import { onMounted, ref, watch } from 'vue';
import { useSessionStore } from '@/stores/session';
import { offlineKit, outboxState } from './status';

export function useKeptPhotos(code: () => string, checkpointId: () => number) {
  const session = useSessionStore();
  const names = ref<string[]>([]);

  async function refresh() {
    const u = session.user;
    if (!u || !outboxState.waiting) {
      names.value = [];
      return;
    }
    const list = await (await offlineKit()).listOutbox(u);
    names.value = list.filter((e) => e.kind === 'photo' && e.code === code().toUpperCase() && e.checkpointId === checkpointId()).map((e) => e.photo!.name);
  }

  /** Keeps the files on this device; a message when one does not fit the limits. */
  async function keep(files: File[]): Promise<string | null> {
    const u = session.user;
    if (!u) return 'Sign in again to keep photos on this device';
    const k = await offlineKit();
    for (const f of files) {
      const refused = await k.queuePhoto(u, { code: code(), checkpointId: checkpointId() }, f);
      if (refused) return refused;
    }
    await refresh();
    return null;
  }

  onMounted(() => void refresh().catch(() => undefined));
  watch(() => [outboxState.waiting, code(), checkpointId()], () => void refresh().catch(() => undefined));
  return { names, keep };
}
