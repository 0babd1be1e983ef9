/**
 * The Record sheet of one sample at one checkpoint: loading it, the reasons of voided values (read
 * from their history), and updating one value's out-of-specification state after a bench step.
 */
import { ref, watch, type Ref } from 'vue';
import type { RecordSheet, RevisionView } from '@shared/schemas/records';
import { api, ApiError } from '@/api/client';
import type { OosState } from '@/components/record/oos';
import { isOffline, offlineKit, outboxState } from '@/offline/status';
import { useSessionStore } from '@/stores/session';

export function sheetPath(code: string, checkpointId: number): string {
  return `/samples/${encodeURIComponent(code)}/checkpoints/${checkpointId}`;
}

export function useRecordSheet(code: Ref<string>, checkpointId: Ref<number>, onApplied: (s: RecordSheet) => void) {
  const sheet = ref<RecordSheet | null>(null);
  const loading = ref(true);
  const notFound = ref(false);
  const loadError = ref('');
  /** Why each voided value was voided, by observation id. */
  const voidReasons = ref<Record<number, string>>({});
  /** Offline: the sheet comes from the copy kept on this device, made then (ISO). */
  const copiedAt = ref<string | null>(null);
  const session = useSessionStore();

  function apply(s: RecordSheet) {
    sheet.value = s;
    onApplied(s);
    void loadVoidReasons(s);
  }

  async function loadVoidReasons(s: RecordSheet) {
    const out: Record<number, string> = {};
    await Promise.all(
      s.attributes
        .filter((a) => a.current?.voided)
        .map(async (a) => {
          try {
            const h = (await api.get<{ history: RevisionView[] }>(`/observations/${a.current!.id}/history`)).history;
            const v = [...h].reverse().find((r) => r.change === 'void');
            if (v?.reason) out[a.current!.id] = v.reason;
          } catch {
            /* the value still shows as voided */
          }
        }),
    );
    voidReasons.value = out;
  }

  /** Loads the sheet; null when it does not open (not found, or an error shown in `loadError`). */
  async function load(): Promise<RecordSheet | null> {
    loading.value = true;
    notFound.value = false;
    loadError.value = '';
    try {
      let s = (await api.get<{ sheet: RecordSheet }>(sheetPath(code.value, checkpointId.value))).sheet;
      copiedAt.value = null;
      // Saves of this sheet still in the outbox show as recorded on this device.
      if (outboxState.waiting && session.user) s = await (await offlineKit()).withOutbox(session.user, s);
      apply(s);
      document.title = `${s.sample.code} · ${s.checkpoint.label} · Keepwell`;
      return s;
    } catch (e) {
      sheet.value = null;
      const kept = isOffline(e) && session.user ? await (await offlineKit()).sheetCopy(session.user, code.value, checkpointId.value).catch(() => null) : null;
      if (kept) {
        copiedAt.value = kept.at;
        apply(kept.sheet);
        return kept.sheet;
      }
      if (e instanceof ApiError && (e.status === 404 || e.status === 400)) notFound.value = true;
      else if (e instanceof ApiError) loadError.value = e.message;
      else throw e;
      return null;
    } finally {
      loading.value = false;
    }
  }

  // Saves of this sheet sent from the outbox: show the server's values.
  watch(
    () => outboxState.waiting,
    (n, was) => {
      if (n < was && sheet.value?.attributes.some((a) => (a.current?.id ?? 0) < 0)) void load();
    },
  );

  /** After a re-measure or confirmation: the value's investigation as the server now has it. */
  function patchInvestigation(studyAttributeId: number, state: OosState) {
    const s = sheet.value;
    if (!s) return;
    sheet.value = {
      ...s,
      attributes: s.attributes.map((a) => (a.studyAttributeId === studyAttributeId && a.current ? { ...a, current: { ...a.current, investigation: state } } : a)),
    };
  }

  return { sheet, loading, notFound, loadError, voidReasons, copiedAt, load, apply, patchInvestigation };
}
