/**
 * What was typed, kept on this device until the server confirms it: a lost connection at the
 * bench must not lose readings. The draft lives in localStorage under a key per lab, person,
 * sample and checkpoint (so a second person on the same tablet never sends someone else's
 * readings under their own name), is written on every change, restored when the page opens
 * again, and removed when the server has taken it.
 *
 * `useRetry` re-sends a pending save when the browser says it is back online and every
 * `intervalMs` while it is still pending.
 */
import { onBeforeUnmount, onMounted, ref, watch, type Ref } from 'vue';

const PREFIX = 'keepwell:draft:v1:';

interface Stored<T> {
  savedAt: string;
  /** True once a save was tried and did not reach the server. */
  pending: boolean;
  data: T;
}

/** The storage key of a draft: lab, person, sample code, checkpoint. */
export function draftKey(labId: number, userId: number, sampleCode: string, checkpointId: number | string): string {
  return `${PREFIX}${labId}:${userId}:${sampleCode.toUpperCase()}:${checkpointId}`;
}

function storage(): Storage | null {
  try {
    return typeof localStorage === 'undefined' ? null : localStorage;
  } catch {
    return null;
  }
}

function read<T>(key: string): Stored<T> | null {
  try {
    const raw = storage()?.getItem(key);
    if (!raw) return null;
    const parsed = JSON.parse(raw) as Stored<T>;
    return parsed && typeof parsed === 'object' && 'data' in parsed ? parsed : null;
  } catch {
    return null;
  }
}

export interface DraftOptions<T extends object> {
  /** The key (see {@link draftKey}); null while it is not known yet. */
  key: () => string | null;
  empty: () => T;
  /** A draft with nothing typed is not stored. */
  isEmpty: (data: T) => boolean;
}

export function useDraft<T extends object>(opts: DraftOptions<T>) {
  const data = ref(opts.empty()) as Ref<T>;
  /** When the stored draft was last written (ISO), or null when none is stored. */
  const savedAt = ref<string | null>(null);
  /** A draft was found on this device when the page opened. */
  const restored = ref(false);
  /** A save was tried and did not reach the server; the draft waits here. */
  const pending = ref(false);
  /** False when the browser refused to store (private mode, full storage). */
  const storable = ref(true);
  let currentKey: string | null = null;
  let loading = false;

  function write() {
    if (!currentKey || loading) return;
    const s = storage();
    try {
      if (opts.isEmpty(data.value) && !pending.value) {
        s?.removeItem(currentKey);
        savedAt.value = null;
        return;
      }
      const at = new Date().toISOString();
      const stored: Stored<T> = { savedAt: at, pending: pending.value, data: data.value };
      s?.setItem(currentKey, JSON.stringify(stored));
      savedAt.value = at;
      storable.value = !!s;
    } catch {
      storable.value = false;
    }
  }

  function load(key: string | null) {
    currentKey = key;
    loading = true;
    const stored = key ? read<T>(key) : null;
    const empty = opts.empty();
    data.value = stored ? { ...empty, ...stored.data } : empty;
    restored.value = !!stored && !opts.isEmpty(data.value);
    pending.value = !!stored?.pending && restored.value;
    savedAt.value = stored?.savedAt ?? null;
    loading = false;
  }

  watch(opts.key, load, { immediate: true });
  // Synchronous, so a draft loaded from storage is not written back (with a new time) at once.
  watch(data, write, { deep: true, flush: 'sync' });

  return {
    data,
    savedAt,
    restored,
    pending,
    storable,
    /** Marks the draft as waiting for the server (offline, or the save failed on the way). */
    markPending() {
      pending.value = true;
      write();
    },
    /** The server took the save: forget the pending flag; the caller removes what was saved from `data`. */
    markConfirmed() {
      pending.value = false;
      restored.value = false;
      write();
    },
    /** Throws the draft away. */
    clear() {
      pending.value = false;
      restored.value = false;
      data.value = opts.empty();
      if (currentKey) storage()?.removeItem(currentKey);
      savedAt.value = null;
    },
  };
}

/** Whether the browser believes it is online, kept up to date. */
export function useOnline() {
  const online = ref(typeof navigator === 'undefined' ? true : navigator.onLine);
  const up = () => (online.value = true);
  const down = () => (online.value = false);
  onMounted(() => {
    window.addEventListener('online', up);
    window.addEventListener('offline', down);
  });
  onBeforeUnmount(() => {
    window.removeEventListener('online', up);
    window.removeEventListener('offline', down);
  });
  return online;
}

/**
 * Calls `attempt` again while `pending` is true: at once when the browser comes back online,
 * and every `intervalMs` otherwise. `attempt` is never run twice at the same time.
 */
export function useRetry(pending: Ref<boolean>, attempt: () => Promise<unknown>, intervalMs = 15_000) {
  let timer: ReturnType<typeof setInterval> | undefined;
  let running = false;
  const nextAt = ref<number | null>(null);

  async function run() {
    if (!pending.value || running) return;
    running = true;
    try {
      await attempt();
    } finally {
      running = false;
      nextAt.value = pending.value ? Date.now() + intervalMs : null;
    }
  }

  const onOnline = () => void run();
  onMounted(() => window.addEventListener('online', onOnline));
  watch(
    pending,
    (p) => {
      if (timer) clearInterval(timer);
      timer = undefined;
      nextAt.value = p ? Date.now() + intervalMs : null;
      if (p && typeof window !== 'undefined') timer = setInterval(() => void run(), intervalMs);
    },
    { immediate: true },
  );
  onBeforeUnmount(() => {
    window.removeEventListener('online', onOnline);
    if (timer) clearInterval(timer);
  });

  return { retryNow: run, nextAt };
}
